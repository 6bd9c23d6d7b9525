import { InputRefusal } from '../domain/refusal.js';

/**
 * Errors raised by the photometry functions. Each names the bad field, its value
 * and what was expected, so a caller can show it without a stack trace.
 */
export class PhotometryInputError extends InputRefusal {
  override readonly name = 'PhotometryInputError';
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

/** Throws unless `value` is a finite number. */
export function requireFinite(field: string, value: number): void {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new PhotometryInputError(field, value, 'expected a finite number');
  }
}

/** Throws unless `value` is a finite number > 0. */
export function requirePositive(field: string, value: number): void {
  requireFinite(field, value);
  if (value <= 0) throw new PhotometryInputError(field, value, 'expected a number greater than 0');
}

/** Throws unless `value` is a finite number >= 0. */
export function requireNonNegative(field: string, value: number): void {
  requireFinite(field, value);
  if (value < 0) throw new PhotometryInputError(field, value, 'expected a number of at least 0');
}

/** Throws unless lo <= value <= hi (both finite). */
export function requireInRange(field: string, value: number, lo: number, hi: number): void {
  requireFinite(field, value);
  if (value < lo || value > hi) throw new PhotometryInputError(field, value, `expected a number from ${lo} to ${hi}`);
}
