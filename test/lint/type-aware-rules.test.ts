import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { ESLint } from 'eslint';
import { describe, expect, it } from 'vitest';

// eslint.config.js run on a fixture it otherwise ignores; the fixture has a tsconfig.json of its
// own, so the type information covers that one file and the check stays quick.
const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const fixture = join(root, 'test', 'lint', 'fixtures', 'promises.ts');

describe('type-aware lint rules (npm run lint)', () => {
  it('report a promise left floating and a promise passed where a boolean is expected', async () => {
    const eslint = new ESLint({ cwd: root, ignore: false });
    const [result] = await eslint.lintFiles([fixture]);
    expect(result?.messages.map((m) => [m.line, m.ruleId])).toEqual([
      [6, '@typescript-eslint/no-floating-promises'],
      [9, '@typescript-eslint/no-misused-promises'],
    ]);
  });
});
