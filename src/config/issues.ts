import type { z } from 'zod';

/** One problem found in an input, with the field it concerns: `sites[0].limits.minAltitudeDeg`. */
export interface ValidationIssue {
  path: string;
  message: string;
}

/** Renders a zod path as `a.b[0].c`; the root is `(root)`. */
export function formatPath(path: ReadonlyArray<PropertyKey>): string {
  let out = '';
  for (const key of path) {
    if (typeof key === 'number') out += `[${key}]`;
    else out += out === '' ? String(key) : `.${String(key)}`;
  }
  return out === '' ? '(root)' : out;
}

function describeBound(issue: z.core.$ZodIssue): string | null {
  if (issue.code !== 'too_small' && issue.code !== 'too_big') return null;
  const small = issue.code === 'too_small';
  const bound = small ? issue.minimum : issue.maximum;
  const inclusive = issue.inclusive ?? true;
  const op = small ? (inclusive ? '>=' : '>') : inclusive ? '<=' : '<';
  switch (issue.origin) {
    case 'number':
    case 'int':
    case 'bigint':
      return `expected a number ${op} ${String(bound)}`;
    case 'string':
      if (small && bound === 1) return 'must not be empty';
      return `expected a string of ${small ? 'at least' : 'at most'} ${String(bound)} characters`;
    case 'array':
    case 'set':
      return `expected ${small ? 'at least' : 'at most'} ${String(bound)} items`;
    default:
      return null;
  }
}

/** One zod issue as our `{path, message}` with a message a user can act on. */
export function toValidationIssue(issue: z.core.$ZodIssue): ValidationIssue {
  const path = formatPath(issue.path);
  const bound = describeBound(issue);
  if (bound) return { path, message: bound };
  if (issue.code === 'invalid_type') {
    return { path, message: issue.message.replace(/^Invalid input: /, '') };
  }
  if (issue.code === 'unrecognized_keys') {
    return { path, message: `unknown field(s): ${issue.keys.join(', ')}` };
  }
  return { path, message: issue.message };
}

/** Turns zod's issues into our `{path, message}` list with messages a user can act on. */
export function toValidationIssues(error: z.ZodError): ValidationIssue[] {
  return error.issues.map(toValidationIssue);
}

/** One line per issue: `path: message`. */
export function issuesToLines(issues: readonly ValidationIssue[]): string[] {
  return issues.map((i) => `${i.path}: ${i.message}`);
}
