import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

// The import rules must say what DEVELOPERS.md's table says: each row's "may import" column, read
// for folder names, against the folders the rule for that row lets through.
const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const FOLDERS = ['config', 'sky', 'orbit', 'photometry', 'planning', 'intake', 'store', 'api', 'views', 'jobs', 'telemetry', 'stats', 'domain', 'commands'];
const SHARED = ['domain', 'stats'];

interface Rule {
  name: string;
  from: { path?: string };
  to: { pathNot?: string[]; path?: string; dependencyTypesNot?: string[] };
}
const rules = (createRequire(import.meta.url)(join(root, '.dependency-cruiser.cjs')) as { forbidden: Rule[] }).forbidden;

/** The table's rows: folder -> the folders its "may import" column names, and whether it says "config types". */
function tableRows(): Map<string, { names: string[]; configTypesOnly: boolean }> {
  const rows = new Map<string, { names: string[]; configTypesOnly: boolean }>();
  for (const line of readFileSync(join(root, 'DEVELOPERS.md'), 'utf8').split('\n')) {
    const m = /^\| `src\/([a-z]+)\/` \|.*\| ([^|]*) \|$/.exec(line);
    if (!m) continue;
    const column = m[2]!;
    rows.set(m[1]!, { names: FOLDERS.filter((f) => new RegExp(`\\b${f}\\b`).test(column)), configTypesOnly: /\bconfig types\b/.test(column) });
  }
  return rows;
}

/** The folders a floor's rule lets it import (besides its own and the shared floors). */
function ruleFolders(floor: string): string[] {
  const rule = rules.find((r) => r.from.path === `^src/${floor}/` && r.name.startsWith(`${floor}-may-import-`));
  if (!rule) return [];
  const named = (rule.to.pathNot ?? []).flatMap((p) => /^\^src\/\(([^)]*)\)\/$/.exec(p)?.[1]?.split('|') ?? /^\^src\/([a-z]+)\//.exec(p)?.slice(1) ?? []);
  return [...new Set(named)].filter((f) => f !== floor && !SHARED.includes(f)).sort();
}

describe('the import rules and DEVELOPERS.md', () => {
  it('agree on what each folder may import', () => {
    const rows = tableRows();
    expect(rows.size).toBeGreaterThanOrEqual(13);
    for (const [floor, row] of rows) {
      if (floor === 'commands') continue; // "everything": no rule but that only the CLI imports it
      expect({ floor, may: ruleFolders(floor) }).toEqual({ floor, may: row.names.filter((f) => f !== floor).sort() });
    }
  });

  it('agree on where only config types may be imported', () => {
    for (const [floor, row] of tableRows()) {
      const typesRule = rules.some((r) => r.name === `${floor}-imports-only-types-of-config`);
      expect({ floor, typesOnly: typesRule }).toEqual({ floor, typesOnly: row.configTypesOnly });
    }
  });
});
