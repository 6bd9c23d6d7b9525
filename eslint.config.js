// Lint rules for src/ and test/: ESLint's recommended rules and typescript-eslint's type-aware
// recommended set (floating and misused promises, unsafe any, awaiting non-promises...).
// `npm run lint` runs this and then dependency-cruiser (.dependency-cruiser.cjs), which guards
// the import table in DEVELOPERS.md.
import js from '@eslint/js';
import { defineConfig } from 'eslint/config';
import tseslint from 'typescript-eslint';

export default defineConfig(
  {
    // test/lint/fixtures/ breaks the rules on purpose; test/lint/type-aware-rules.test.ts lints it.
    ignores: ['dist/**', 'node_modules/**', 'test/**/fixtures/**/*.mjs', 'test/lint/fixtures/**'],
  },
  {
    files: ['src/**/*.ts', 'test/**/*.ts'],
    extends: [js.configs.recommended, tseslint.configs.recommendedTypeChecked],
    languageOptions: {
      parserOptions: {
        // Each file is checked with the tsconfig.json nearest to it (test/ has its own).
        projectService: true,
        tsconfigRootDir: import.meta.dirname,
      },
    },
    linterOptions: {
      reportUnusedDisableDirectives: 'error',
    },
    rules: {
      '@typescript-eslint/no-floating-promises': 'error',
      '@typescript-eslint/no-misused-promises': 'error',
      // `_name` marks a parameter or binding kept on purpose (a handler's signature, a skipped
      // element of a tuple).
      '@typescript-eslint/no-unused-vars': [
        'error',
        { argsIgnorePattern: '^_', varsIgnorePattern: '^_', caughtErrors: 'none' },
      ],
      // Off: an `async` function without `await` is how the code meets a promise-returning
      // signature (fastify's async handlers, CommandMain, injected assessors), and it turns a
      // throw into a rejection the caller already handles. no-floating-promises and
      // no-misused-promises guard the promises themselves.
      '@typescript-eslint/require-await': 'off',
    },
  },
  {
    files: ['test/**/*.ts'],
    rules: {
      // Off in tests: they read answers as parsed JSON (`res.json()`, `JSON.parse`, a browser
      // page's evaluate), which is `any` by design; the expect() calls are the check on its shape.
      // Source files keep these rules: there, input is parsed with zod at the edge.
      '@typescript-eslint/no-unsafe-argument': 'off',
      '@typescript-eslint/no-unsafe-assignment': 'off',
      '@typescript-eslint/no-unsafe-call': 'off',
      '@typescript-eslint/no-unsafe-member-access': 'off',
      '@typescript-eslint/no-unsafe-return': 'off',
    },
  },
);
