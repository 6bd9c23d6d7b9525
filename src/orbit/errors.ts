import { InputRefusal } from '../domain/refusal.js';

/**
 * Errors raised by the orbit functions. Each names the bad field, its value and
 * what was expected, so a caller can show it without a stack trace.
 */
export class OrbitInputError extends InputRefusal {
  override readonly name = 'OrbitInputError';
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

/** An iteration (Kepler's equation, light time) that did not converge; names the inputs that caused it. */
export class OrbitConvergenceError extends InputRefusal {
  override readonly name = 'OrbitConvergenceError';
}

/** Throws unless `value` is a finite number. */
export function requireFinite(field: string, value: number): void {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new OrbitInputError(field, value, 'expected a finite number');
  }
}

/** Throws unless `value` is a finite number > 0. */
export function requirePositive(field: string, value: number): void {
  requireFinite(field, value);
  if (value <= 0) throw new OrbitInputError(field, value, 'expected a number greater than 0');
}

/** Throws unless lo <= value <= hi (both finite). */
export function requireInRange(field: string, value: number, lo: number, hi: number): void {
  requireFinite(field, value);
  if (value < lo || value > hi) throw new OrbitInputError(field, value, `expected a number from ${lo} to ${hi}`);
}
