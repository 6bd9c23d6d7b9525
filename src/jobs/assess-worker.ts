/**
 * Worker-thread entry: runs one assessment (orbit estimate and plan) per task,
 * off the API thread. Input and output are plain data; a refusal or a failure
 * comes back as a typed value (WorkerReply).
 */
import type { Site } from '../config/schema.js';
import { coreFromStoredBytes, storedCoreBytes } from '../orbit/estimation/index.js';
import { assessObject, type AssessmentReuse, type RangePriorChoice } from '../planning/assess.js';
import { createSkyTimelineCache, createTrackCache } from '../planning/reuse.js';
import type { ScoreWeights } from '../planning/score.js';
import type { AssessInput, AssessOutput } from './assessment-runner.js';
import { isInputRefusal } from '../domain/refusal.js';
import { storedRequest } from './stored-request.js';
import { workerTask } from './worker-task.js';

export interface AssessTask {
  input: AssessInput;
  sites: Site[];
  horizonH: number;
  members: number;
  weights: Partial<ScoreWeights>;
  rangePrior?: RangePriorChoice;
  /** Memory the worker may keep for the next replans, MB (config planning.reuseMb); 0: none. */
  reuseMb?: number;
}

/**
 * The assessment as the runner stores it. With `reuse`, work kept from earlier
 * tasks (the same answer, sooner); a kept estimate from the store is used when
 * its key matches, and a newly computed one comes back to be stored.
 */
export function runAssessTask(task: AssessTask, reuse?: AssessmentReuse): AssessOutput {
  const kept = task.input.kept ? coreFromStoredBytes(task.input.kept.bytes) : null;
  const a = assessObject({
    objectId: task.input.objectId,
    observations: task.input.observations,
    orbit: task.input.orbit,
    now: new Date(task.input.nowIso),
    sites: task.sites,
    horizonH: task.horizonH,
    members: task.members,
    weights: task.weights,
    ...(task.rangePrior ? { rangePrior: task.rangePrior } : {}),
    ...(reuse ? { reuse } : {}),
    keptEstimate: kept && task.input.kept ? { key: task.input.kept.key, core: kept } : null,
    ...(task.input.firstLook ? { firstLook: true } : {}),
  });
  return {
    summary: a.summary,
    retireReason: a.retireReason,
    usable: a.usable,
    requests: a.requests.map(storedRequest),
    // A new full estimate is kept in the store; a first look's is not (the full one follows).
    estimate: { key: a.estimate.key, members: task.members, keep: a.estimate.computed && a.firstLook === null ? storedCoreBytes(a.estimate.core) : null },
  };
}

/** What this worker thread keeps between its tasks (made at its first task; tasks run one at a time). */
let kept: AssessmentReuse | null = null;
function workerReuse(mb: number | undefined): AssessmentReuse | undefined {
  if (!mb || mb <= 0) return undefined;
  kept ??= { tracks: createTrackCache({ maxBytes: mb * 1024 * 1024 }), timelines: createSkyTimelineCache() };
  return kept;
}

/** The entry the assessment pool runs. */
export default workerTask((task: AssessTask) => runAssessTask(task, workerReuse(task.reuseMb)), isInputRefusal);
