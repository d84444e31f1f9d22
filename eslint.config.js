// @ts-check
import js from '@eslint/js';
import tseslint from 'typescript-eslint';

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
