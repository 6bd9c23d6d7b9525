import { estimateObject, type NoticeOrbitBlock } from '../orbit/estimation/index.js';
import { seedForObject, type ObjectEstimate } from '../orbit/estimate-types.js';
import type { Store } from '../store/index.js';

/**
 * On-demand estimates for the API (ephemeris, pictures), cached per object while
 * its tracklet is unchanged, for at most ten minutes.
 */
export function createEstimateCache(store: Store, members: number, clock: () => Date): (objectId: string) => ObjectEstimate | null {
  const cache = new Map<string, { key: string; at: number; estimate: ObjectEstimate }>();
  return (objectId) => {
    const object = store.objects.getObject(objectId);
    if (!object) return null;
    const now = clock();
    const input = { observations: store.objects.tracklet(objectId), orbit: store.objects.orbitBlock(objectId) };
    if (input.observations.length === 0 && !input.orbit) return null;
    const key = `${input.observations.length}|${input.observations.at(-1)?.t ?? ''}|${object.orbit ?? ''}`;
    const hit = cache.get(objectId);
    if (hit && hit.key === key && now.getTime() - hit.at < 600_000) return hit.estimate;
    const estimate = estimateObject({
      objectId,
      observations: input.observations,
      orbit: (input.orbit as NoticeOrbitBlock | null) ?? undefined,
      now,
      members,
      seed: seedForObject(objectId),
    });
    if (cache.size > 200) cache.delete(cache.keys().next().value as string);
    cache.set(objectId, { key, at: now.getTime(), estimate });
    return estimate;
  };
}

