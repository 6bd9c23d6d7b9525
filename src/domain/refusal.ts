/**
 * Refusals: the typed errors by which the numeric floors (sky, orbit,
 * photometry, planning) refuse their input or give up on it extend
 * InputRefusal. The data cannot be used, which is not a fault of the service.
 *
 * Inside a worker thread a refusal is recognised with `instanceof` and crosses
 * the boundary as the value `{ kind: 'refused', message }`
 * (src/jobs/worker-task.ts), so renaming an error class changes nothing on the
 * other side; a new error class of a numeric floor is a refusal by extending
 * this one (test/domain/refusal.test.ts checks every one does).
 */
export class InputRefusal extends Error {
  override readonly name: string = 'InputRefusal';
}

/** True when `err` is a numeric floor's refusal of its input. */
export function isInputRefusal(err: unknown): err is InputRefusal {
  return err instanceof InputRefusal;
}
