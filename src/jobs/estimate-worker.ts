/**
 * Worker-thread entry for on-demand estimates (the API's ephemeris and sky
 * picture): keeps the estimates it computed, per object, while the tracklet is
 * unchanged and for at most ten minutes, and answers with plain data.
 */
import type { GeodeticLocation } from '../config/schema.js';
import type { EphemerisRow } from '../orbit/ephemeris.js';
import { estimateObject } from '../orbit/estimation/index.js';
import { seedForObject, type ObjectEstimate } from '../orbit/estimate-types.js';
import { rangingFor, type RangePriorChoice } from '../planning/assess.js';
import { isInputRefusal } from '../domain/refusal.js';
import type { AssessInput } from './assessment-runner.js';
import { workerTask } from './worker-task.js';

export interface EstimateTask {
  input: AssessInput;
  /** Changes whenever the stored tracklet or orbit block changes. */
  dataKey: string;
  members: number;
  rangePrior: RangePriorChoice;
  ask: { kind: 'rows'; location: GeodeticLocation; timesIso: string[] } | { kind: 'sky'; location: GeodeticLocation; tIso: string; maxMembers: number };
}

export type EstimateAnswer =
  | { kind: 'rows'; method: string; rows: EphemerisRow[] }
  | { kind: 'sky'; method: string; row: EphemerisRow | null; members: { raDeg: number; decDeg: number }[] | null };

const KEEP_MS = 600_000;
const MAX_KEPT = 200;

export function createEstimateTaskHandler(): (task: EstimateTask) => EstimateAnswer {
  const kept = new Map<string, { dataKey: string; atMs: number; estimate: ObjectEstimate }>();
  const estimateOf = (task: EstimateTask): ObjectEstimate => {
    const nowMs = Date.parse(task.input.nowIso);
    const dataKey = `${task.rangePrior}|${task.dataKey}`;
    const hit = kept.get(task.input.objectId);
    if (hit && hit.dataKey === dataKey && nowMs - hit.atMs < KEEP_MS && nowMs >= hit.atMs) return hit.estimate;
    const estimate = estimateObject({
      objectId: task.input.objectId,
      observations: task.input.observations,
      orbit: task.input.orbit ?? undefined,
      now: new Date(nowMs),
      members: task.members,
      seed: seedForObject(task.input.objectId),
      ranging: rangingFor(task.rangePrior),
    });
    kept.delete(task.input.objectId);
    kept.set(task.input.objectId, { dataKey, atMs: nowMs, estimate });
    if (kept.size > MAX_KEPT) kept.delete(kept.keys().next().value!);
    return estimate;
  };
  return (task) => {
    const estimate = estimateOf(task);
    const ask = task.ask;
    if (ask.kind === 'rows') return { kind: 'rows', method: estimate.summary.method, rows: estimate.ephemeris(ask.location, ask.timesIso.map((t) => new Date(t))) };
    const t = new Date(ask.tIso);
    return {
      kind: 'sky',
      method: estimate.summary.method,
      row: estimate.ephemeris(ask.location, [t])[0] ?? null,
      members: estimate.memberPositions ? estimate.memberPositions(ask.location, t, ask.maxMembers) : null,
    };
  };
}

/** The entry the on-demand pool runs: one handler per worker thread, with its own kept estimates. */
export default workerTask(createEstimateTaskHandler(), isInputRefusal);
