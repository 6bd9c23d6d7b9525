import { execFile } from 'node:child_process';
import { copyFileSync, existsSync, mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { afterAll, describe, expect, it } from 'vitest';
import { tempDir } from '../helpers.js';

// The import rules of .dependency-cruiser.cjs (DEVELOPERS.md's table), run as `npm run lint` runs
// them, on small trees written for each case: a wrong import must fail, a right one must pass.
const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const depcruise = join(root, 'node_modules', 'dependency-cruiser', 'bin', 'dependency-cruise.mjs');
const trees: string[] = [];
afterAll(() => {
  for (const t of trees) rmSync(t, { recursive: true, force: true });
});

interface Violation {
  from: string;
  to: string;
  rule: string;
}

/** Writes `files` (path -> source) into a fresh tree and cruises it with the project's rules. */
async function cruise(files: Record<string, string>): Promise<Violation[]> {
  const tree = tempDir('nightjar-imports-');
  trees.push(tree);
  copyFileSync(join(root, 'tsconfig.json'), join(tree, 'tsconfig.json'));
  for (const [path, source] of Object.entries(files)) {
    mkdirSync(dirname(join(tree, path)), { recursive: true });
    writeFileSync(join(tree, path), source);
  }
  const tops = ['src', 'test'].filter((top) => existsSync(join(tree, top)));
  const args = [depcruise, ...tops, '--config', join(root, '.dependency-cruiser.cjs'), '--output-type', 'json'];
  // depcruise exits non-zero when it finds a violation; its JSON report is on stdout either way.
  const stdout = await promisify(execFile)(process.execPath, args, { cwd: tree }).then(
    (r) => r.stdout,
    (e: { stdout?: string }) => e.stdout ?? '',
  );
  const report = JSON.parse(stdout) as { summary: { violations: { from: string; to: string; rule: { name: string } }[] } };
  return report.summary.violations.map((v) => ({ from: v.from, to: v.to, rule: v.rule.name }));
}

const storeFile = { 'src/store/database.ts': 'export const openStore = (): number => 1;\n' };
const statsFile = { 'src/stats/index.ts': 'export const median = (xs: number[]): number => xs[0] ?? 0;\n' };
const configFile = { 'src/config/schema.ts': 'export interface Site { id: string }\nexport const DEFAULT_SITE: Site = { id: "x" };\n' };

describe('import rules (npm run lint)', () => {
  it('refuse a numeric floor importing the store', async () => {
    const found = await cruise({ ...storeFile, 'src/sky/night.ts': "import { openStore } from '../store/database.js';\nexport const n = openStore();\n" });
    expect(found).toEqual([{ from: 'src/sky/night.ts', to: 'src/store/database.ts', rule: 'sky-may-import-config-types' }]);
  });

  it('let a floor import what its row allows, and the stats floor', async () => {
    const found = await cruise({
      ...statsFile,
      ...configFile,
      'src/sky/night.ts': "import { median } from '../stats/index.js';\nimport type { Site } from '../config/schema.js';\nexport const f = (s: Site): number => median([s.id.length]);\n",
      'src/planning/plan.ts': "import { f } from '../sky/night.js';\nexport const g = f;\n",
    });
    expect(found).toEqual([]);
  });

  it('refuse the store importing a floor above it', async () => {
    const found = await cruise({ 'src/intake/notice.ts': 'export const x = 1;\n', 'src/store/notices.ts': "import { x } from '../intake/notice.js';\nexport const y = x;\n" });
    expect(found).toEqual([{ from: 'src/store/notices.ts', to: 'src/intake/notice.ts', rule: 'store-may-import-nothing' }]);
  });

  it('refuse code imported where only types may be', async () => {
    const found = await cruise({ ...configFile, 'src/photometry/snr.ts': "import { DEFAULT_SITE } from '../config/schema.js';\nexport const id = DEFAULT_SITE.id;\n" });
    expect(found).toEqual([{ from: 'src/photometry/snr.ts', to: 'src/config/schema.ts', rule: 'photometry-imports-only-types-of-config' }]);
  });

  it.each(['stats', 'domain'])('refuse the shared floor %s importing any other folder', async (shared) => {
    const found = await cruise({ ...storeFile, [`src/${shared}/index.ts`]: "import { openStore } from '../store/database.js';\nexport const z = openStore();\n" });
    expect(found).toEqual([{ from: `src/${shared}/index.ts`, to: 'src/store/database.ts', rule: `${shared}-may-import-nothing` }]);
  });

  it('let every floor import the shared floors', async () => {
    const found = await cruise({
      'src/domain/kind.ts': "export type Kind = 'a' | 'b';\n",
      'src/store/requests.ts': "import type { Kind } from '../domain/kind.js';\nexport const k: Kind = 'a';\n",
      'src/sky/night.ts': "import type { Kind } from '../domain/kind.js';\nexport const k: Kind = 'b';\n",
    });
    expect(found).toEqual([]);
  });

  it('refuse file access in a numeric floor', async () => {
    const found = await cruise({ 'src/orbit/table.ts': "import { readFileSync } from 'node:fs';\nexport const t = readFileSync;\n" });
    expect(found).toEqual([{ from: 'src/orbit/table.ts', to: 'fs', rule: 'pure-floors-do-no-io' }]);
  });

  it('refuse a reference file importing the code it checks, while the scorer beside the tests may', async () => {
    const found = await cruise({
      'src/orbit/estimate.ts': 'export const estimate = (): number => 1;\n',
      'test/orbit/estimation/reference-scorer.ts': "import { estimate } from '../../../src/orbit/estimate.js';\nexport const run = estimate;\n",
      'test/reference/truth.ts': "import { estimate } from '../../src/orbit/estimate.js';\nexport const truth = estimate;\n",
    });
    expect(found).toEqual([{ from: 'test/reference/truth.ts', to: 'src/orbit/estimate.ts', rule: 'reference-shares-no-code' }]);
  });

  it('refuse an import that does not resolve, since no rule could judge it', async () => {
    const found = await cruise({ 'src/sky/night.ts': "import { x } from '../store/missing.js';\nexport const n = x;\n" });
    expect(found.map((v) => v.rule)).toContain('not-to-unresolvable');
  });
});
