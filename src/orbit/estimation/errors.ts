/**
 * Errors of short-arc estimation. Each names the field, the value and why it
 * cannot be used, so a caller can show the message as it is.
 */
export class EstimationInputError extends Error {
  override readonly name = 'EstimationInputError';
  readonly field: string;
  readonly value: unknown;
  constructor(field: string, value: unknown, reason: string) {
    super(`${field} = ${String(value)}: ${reason}`);
    this.field = field;
    this.value = value;
  }
}

/** Thrown when no orbit consistent with the tracklet was found (every ranging node excluded). */
export class EstimationFailedError extends Error {
  override readonly name = 'EstimationFailedError';
}
