// Lint: the recommended JavaScript and TypeScript rules, and the direction imports may point in, so the
// architecture in DEVELOPERS.md is checked rather than hoped for:
//   core (DOM-free, runs in Node and the browser)  ← render (three.js drawing) ← worker, ui;  cli → core;
//   ui never loads tfjs;  nobody imports research/.
import js from '@eslint/js';
import globals from 'globals';
import tseslint from 'typescript-eslint';

const noResearch = {
  group: ['**/research/**'],
  message: 'research/ is the lab: the product and its tests do not import it.',
};

/** Core modules that import @tensorflow/tfjs (directly or through another): the page may import their types only. */
const TFJS_CORE = [
  '**/core/model/encoder',
  '**/core/model/embed',
  '**/core/model/trainer',
  '**/core/model/checkpoint',
  '**/core/model/backend',
  '**/core/model/ops/*',
  '**/core/model/losses/index',
  '**/core/model/losses/common',
  '**/core/model/losses/ntxent',
  '**/core/model/losses/supcon',
  '**/core/model/losses/triplet',
  '**/core/model/losses/margin',
  '**/core/model/adam',
  '**/core/quality/evaluate',
  '**/core/quality/methods',
  '**/core/quality/study',
  '**/core/retrieval/tensor-index',
];

/** What no core module imports. */
const CORE = [
  {
    group: ['**/ui/**', '**/worker/**', '**/cli/**'],
    message: 'core is used by ui, worker and cli; it does not import them.',
  },
  { group: ['lit', 'lit/*'], message: 'core has no UI.' },
  {
    group: ['node:*'],
    message: 'core runs in the browser too: no Node modules (the cli reads files and hands core bytes).',
  },
];

const restrict = (...patterns) => ['error', { patterns: [noResearch, ...patterns] }];

export default tseslint.config(
  { ignores: ['dist/**', 'node_modules/**', 'test-artifacts/**', 'demo-shapes/**'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    languageOptions: { globals: { ...globals.browser, ...globals.node, ...globals.worker } },
    rules: {
      // `_name` marks a value left unused on purpose (e.g. a field dropped by destructuring).
      '@typescript-eslint/no-unused-vars': [
        'error',
        { argsIgnorePattern: '^_', varsIgnorePattern: '^_', caughtErrors: 'none' },
      ],
      '@typescript-eslint/no-restricted-imports': restrict(),
    },
  },
  {
    files: ['src/core/**/*.ts'],
    rules: {
      '@typescript-eslint/no-restricted-imports': restrict(...CORE, {
        group: ['three', 'three/*'],
        message: 'core uses three only in its file readers (core/mesh).',
      }),
    },
  },
  {
    files: ['src/core/mesh/**/*.ts'],
    rules: {
      '@typescript-eslint/no-restricted-imports': restrict(...CORE, {
        group: ['three/examples/jsm/!(loaders|libs)/**'],
        message: "the readers use three's loaders and their libraries only.",
      }),
    },
  },
  {
    files: ['src/ui/**/*.ts'],
    rules: {
      '@typescript-eslint/no-restricted-imports': restrict(
        {
          group: ['@tensorflow/*'],
          message: 'the page never loads tfjs: training and embedding run in the training worker.',
        },
        {
          group: TFJS_CORE,
          allowTypeImports: true,
          message: 'this core module loads tfjs: the page may import its types only (import type).',
        },
        {
          regex: 'core/model/losses$',
          allowTypeImports: true,
          message: 'the loss registry loads tfjs: the page reads losses/names.',
        },
        { group: ['**/cli/**', 'node:*'], message: 'the page does not use the command line or Node.' },
      ),
    },
  },
  {
    files: ['src/render/**/*.ts'],
    rules: {
      '@typescript-eslint/no-restricted-imports': restrict({
        group: ['**/ui/**', '**/worker/**', '**/cli/**', 'lit', 'lit/*', 'node:*'],
        message: 'render holds three.js drawing shared by the page and the workers; it imports core and three only.',
      }),
    },
  },
  {
    files: ['src/worker/**/*.ts'],
    rules: {
      '@typescript-eslint/no-restricted-imports': restrict({
        group: ['**/ui/**', '**/cli/**', 'lit', 'lit/*'],
        message: 'workers do heavy work for the page; they import core and render only.',
      }),
    },
  },
  {
    files: ['src/cli/**/*.ts'],
    rules: {
      '@typescript-eslint/no-restricted-imports': restrict({
        group: ['**/ui/**', '**/worker/**', 'lit', 'lit/*'],
        message: 'the command line uses core, not the workbench.',
      }),
    },
  },
  {
    files: ['research/**/*.ts'],
    rules: { '@typescript-eslint/no-restricted-imports': 'off' },
  },
);
