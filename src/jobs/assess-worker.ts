/**
 * Worker-thread entry: runs one assessment (orbit estimate and plan) per task,
 * off the API thread. Input and output are plain data; a refusal or a failure
 * comes back as a typed value (WorkerReply).
 */
import type { Site } from '../config/schema.js';
import type { NoticeOrbitBlock } from '../orbit/estimation/index.js';
import { assessObject, type RangePriorChoice } from '../planning/assess.js';
import type { ScoreWeights } from '../planning/score.js';
import type { AssessInput, AssessOutput } from './assessment-runner.js';
import { isNumericRefusal } from '../planning/refusals.js';
import { storedRequest } from './stored-request.js';
import { workerTask } from './worker-task.js';

export interface AssessTask {
  input: AssessInput;
  sites: Site[];
  horizonH: number;
  members: number;
  weights: Partial<ScoreWeights>;
  rangePrior?: RangePriorChoice;
}

/** The assessment as the runner stores it. */
export function runAssessTask(task: AssessTask): AssessOutput {
  const a = assessObject({
    objectId: task.input.objectId,
    observations: task.input.observations,
    orbit: (task.input.orbit as NoticeOrbitBlock | null) ?? null,
    now: new Date(task.input.nowIso),
    sites: task.sites,
    horizonH: task.horizonH,
    members: task.members,
    weights: task.weights,
    ...(task.rangePrior ? { rangePrior: task.rangePrior } : {}),
  });
  return {
    summary: a.summary,
    retireReason: a.retireReason,
    usable: a.usable,
    requests: a.requests.map(storedRequest),
  };
}

/** The entry the assessment pool runs. */
export default workerTask(runAssessTask, isNumericRefusal);
