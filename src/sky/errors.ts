import { InputRefusal } from '../domain/refusal.js';

/** A bad input to a sky computation: names the field, the value and why it was refused. */
export class SkyInputError extends InputRefusal {
  override readonly name = 'SkyInputError';
  readonly field: string;
  readonly value: unknown;
  /** Why the value was refused, without the field's name (for callers that name the field their own way). */
  readonly reason: string;
  constructor(field: string, value: unknown, reason: string) {
    super(`${field} = ${describeValue(value)}: ${reason}`);
    this.field = field;
    this.value = value;
    this.reason = reason;
  }
}

function describeValue(value: unknown): string {
  if (value instanceof Date) return Number.isNaN(value.getTime()) ? 'Invalid Date' : value.toISOString();
  if (typeof value === 'string') return JSON.stringify(value);
  return String(value);
}

/** Throws SkyInputError unless `value` is a finite number within [min, max]. */
export function requireFinite(field: string, value: number, min = -Infinity, max = Infinity): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new SkyInputError(field, value, 'expected a finite number');
  }
  if (value < min || value > max) {
    throw new SkyInputError(field, value, `expected a value in [${min}, ${max}]`);
  }
  return value;
}

/** Throws SkyInputError unless `value` is a valid Date. */
export function requireDate(field: string, value: Date): Date {
  if (!(value instanceof Date) || Number.isNaN(value.getTime())) {
    throw new SkyInputError(field, value, 'expected a valid Date (UTC instant)');
  }
  return value;
}
