import { InputRefusal } from '../domain/refusal.js';

/** A bad input to the planner: names the field, the value and why it was refused. */
export class PlanningInputError extends InputRefusal {
  override readonly name = 'PlanningInputError';
  readonly field: string;
  readonly value: unknown;
  constructor(field: string, value: unknown, reason: string) {
    super(`${field} = ${describeValue(value)}: ${reason}`);
    this.field = field;
    this.value = value;
  }
}

function describeValue(value: unknown): string {
  if (value instanceof Date) return Number.isNaN(value.getTime()) ? 'Invalid Date' : value.toISOString();
  if (typeof value === 'string') return JSON.stringify(value);
  return String(value);
}

/** Throws PlanningInputError unless `value` is a finite number within [min, max]. */
export function requireFinite(field: string, value: number, min = -Infinity, max = Infinity): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) throw new PlanningInputError(field, value, 'expected a finite number');
  if (value < min || value > max) throw new PlanningInputError(field, value, `expected a value in [${min}, ${max}]`);
  return value;
}

/** Throws PlanningInputError unless `value` is a valid Date. */
export function requireDate(field: string, value: Date): Date {
  if (!(value instanceof Date) || Number.isNaN(value.getTime())) {
    throw new PlanningInputError(field, value, 'expected a valid Date (UTC instant)');
  }
  return value;
}

/** Parses an ISO-8601 UTC string, naming the field when it is not one. */
export function requireIsoUtc(field: string, text: string): Date {
  const ms = typeof text === 'string' && /Z$/.test(text) ? Date.parse(text) : Number.NaN;
  if (!Number.isFinite(ms)) throw new PlanningInputError(field, text, 'expected an ISO-8601 UTC time such as 2027-03-04T05:06:07Z');
  return new Date(ms);
}
