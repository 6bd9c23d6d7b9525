import { readdirSync } from 'node:fs';
import { dirname, join, relative } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { describe, expect, it } from 'vitest';
import { InputRefusal, isInputRefusal } from '../../src/domain/refusal.js';

const src = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'src');
const NUMERIC_FLOORS = ['sky', 'orbit', 'photometry', 'planning'];

function tsFiles(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true })
    .sort((a, b) => a.name.localeCompare(b.name))
    .flatMap((e) => (e.isDirectory() ? tsFiles(join(dir, e.name)) : e.name.endsWith('.ts') ? [join(dir, e.name)] : []));
}

/** Every error class the numeric floors export, once each (an index re-exports some), by module and name. */
async function numericErrorClasses(): Promise<{ where: string; cls: new (...args: never[]) => Error }[]> {
  const found: { where: string; cls: new (...args: never[]) => Error }[] = [];
  for (const file of NUMERIC_FLOORS.flatMap((f) => tsFiles(join(src, f)))) {
    const mod = (await import(pathToFileURL(file).href)) as Record<string, unknown>;
    for (const [name, value] of Object.entries(mod)) {
      if (typeof value === 'function' && value.prototype instanceof Error && !found.some((f) => f.cls === value)) found.push({ where: `${relative(src, file)}: ${name}`, cls: value as new (...args: never[]) => Error });
    }
  }
  return found;
}

describe('refusals of the numeric floors', () => {
  it('are every error class those floors export, except a site configuration the plans cannot use', async () => {
    const classes = await numericErrorClasses();
    expect(classes.length).toBeGreaterThanOrEqual(8);
    const notRefusals = classes.filter((c) => !(c.cls.prototype instanceof InputRefusal)).map((c) => c.where);
    // A site whose configuration lacks what a plan needs is the service's fault, not the data's.
    expect(notRefusals).toEqual(['photometry/conditions.ts: PlanConfigError']);
  });

  it('are recognised by their type, not their name', () => {
    class Renamed extends InputRefusal {
      override readonly name = 'SomethingElse';
    }
    expect(isInputRefusal(new Renamed('x'))).toBe(true);
    const plain = new Error('x');
    plain.name = 'EstimationInputError';
    expect(isInputRefusal(plain)).toBe(false);
  });
});
