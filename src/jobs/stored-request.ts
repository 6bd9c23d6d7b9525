import type { PlannedRequest } from '../planning/plan-object.js';
import type { NewRequest } from '../store/requests.js';

/** A planned request as the store takes it: the planner's fields without its working ones (duration). */
export function storedRequest(r: PlannedRequest): NewRequest {
  return {
    siteId: r.siteId,
    kind: r.kind,
    night: r.night,
    score: r.score,
    windowStart: r.windowStart,
    windowEnd: r.windowEnd,
    recommendedStart: r.recommendedStart,
    expiresAt: r.expiresAt,
    body: r.body,
  };
}
