// @ts-check
import js from '@eslint/js';
import tseslint from 'typescript-eslint';
import { shortNames } from './eslint/short-names.js';

export default tseslint.config(
  { ignores: ['dist/**', 'dist-bench/**', 'node_modules/**', '.cache/**', '.stack/**', 'test-artifacts/**'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
    },
  },
  {
    // Functions a reader can hold in view: split a longer one into named steps.
    files: ['libs/**/*.ts', 'services/**/*.ts'],
    rules: {
      'max-lines-per-function': ['error', { max: 80, skipBlankLines: true, skipComments: true }],
    },
  },
  {
    // One connection layer: only services/connect/ builds kafkajs and ioredis clients, so every
    // command gets the same TLS, SASL and ACL options (types may be imported anywhere).
    files: ['services/**/*.ts'],
    ignores: ['services/connect/**'],
    rules: {
      '@typescript-eslint/no-restricted-imports': [
        'error',
        {
          paths: [
            {
              name: 'kafkajs',
              importNames: ['Kafka'],
              allowTypeImports: true,
              message: 'build Kafka clients with buildKafka() from services/connect/.',
            },
            {
              name: 'ioredis',
              importNames: ['Redis', 'Cluster', 'default'],
              allowTypeImports: true,
              message: 'build Redis clients with buildRedis() from services/connect/.',
            },
          ],
        },
      ],
    },
  },
  {
    // Names that say what they hold (DEVELOPERS.md, Conventions): one- and two-letter names only in
    // one-expression lambdas, i/j loop counters and type parameters. `ts` is the reading's own field.
    files: ['libs/**/*.ts'],
    plugins: { local: { rules: { 'short-names': shortNames } } },
    rules: {
      'local/short-names': ['error', { allow: ['ts', 'id', 'ms', 'q1', 'q3', 'to', 'at', 'of', 'by', 'up'] }],
    },
  },
  {
    // The architecture rule: libs/ are pure (no I/O, no clock) and never import from services/.
    files: ['libs/**/*.ts'],
    rules: {
      'no-restricted-imports': [
        'error',
        {
          patterns: [
            {
              group: ['**/services/**', '../services/*', '../../services/*'],
              message: 'libs/ must not import from services/ (imports flow services -> libs).',
            },
            {
              group: [
                'node:fs*',
                'fs',
                'fs/*',
                'node:net',
                'net',
                'node:http*',
                'http',
                'https',
                'node:child_process',
                'child_process',
                'kafkajs',
                'ioredis',
                'pino',
                'prom-client',
              ],
              message: 'libs/ are pure: no I/O. Put edges in services/.',
            },
          ],
        },
      ],
      'no-restricted-properties': [
        'error',
        { object: 'Date', property: 'now', message: 'libs/ never read the clock; pass time in.' },
        { object: 'Math', property: 'random', message: 'libs/ are deterministic; take a seeded generator.' },
        { object: 'performance', property: 'now', message: 'libs/ never read the clock.' },
      ],
      'no-restricted-syntax': [
        'error',
        {
          selector: "NewExpression[callee.name='Date'][arguments.length=0]",
          message: 'libs/ never read the clock; pass time in.',
        },
      ],
    },
  },
);
