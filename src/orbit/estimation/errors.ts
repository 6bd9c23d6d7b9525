import { InputRefusal } from '../../domain/refusal.js';

/**
 * Errors of short-arc estimation. Each names the field, the value and why it
 * cannot be used, so a caller can show the message as it is.
 */
export class EstimationInputError extends InputRefusal {
  override readonly name = 'EstimationInputError';
  readonly field: string;
  readonly value: unknown;
  /** Why the value was refused, without the field's name (for callers that name the field their own way). */
  readonly reason: string;
  constructor(field: string, value: unknown, reason: string) {
    super(`${field} = ${String(value)}: ${reason}`);
    this.field = field;
    this.value = value;
    this.reason = reason;
  }
}

/** Thrown when no orbit consistent with the tracklet was found (every ranging node excluded). */
export class EstimationFailedError extends InputRefusal {
  override readonly name = 'EstimationFailedError';
}
