// ESLint flat config: typescript-eslint recommended rules on server/, web/, test/ and scripts/,
// plus the rule of the rooms (DEVELOPERS.md): which folder may import which. A wrong-direction
// import fails the lint; test/unit/foundation/lint-rooms.test.ts proves each rule bites.
import js from '@eslint/js';
import tseslint from 'typescript-eslint';

// Pure computation: no HTTP, no database, no queues, no use cases above them.
export const engineRooms = ['radio', 'terrain', 'propagation', 'coverage', 'planning', 'siting', 'capacity', 'calibration', 'tuning'];
const infrastructurePackages = ['fastify', 'fastify/*', '@fastify/*', 'fastify-*', '@prisma/*', 'prisma', 'bullmq', 'ioredis', 'pg', '@electric-sql/*', 'pglite-prisma-adapter'];
const roomPattern = (room) => [`**/${room}/*`, `**/${room}/**`, `**/${room}.ts`];

export const roomRules = [
  {
    files: engineRooms.map((room) => `server/${room}/**/*.ts`),
    rules: {
      'no-restricted-imports': ['error', {
        patterns: [
          { group: ['db', 'api', 'jobs', 'cli', 'app'].flatMap(roomPattern), message: 'Engine rooms are pure computation: no db, api, jobs, cli or app imports (DEVELOPERS.md, rule of the rooms).' },
          { group: infrastructurePackages, message: 'Engine rooms are pure computation: no HTTP server, database or queue packages.' },
        ],
      }],
    },
  },
  {
    files: ['server/cli/**/*.ts', 'server/cli.ts'],
    rules: {
      'no-restricted-imports': ['error', {
        patterns: [{ group: roomPattern('api'), message: 'The CLI calls server/app use cases, never the API (DEVELOPERS.md).' }],
      }],
    },
  },
  {
    files: ['server/api/**/*.ts'],
    rules: {
      'no-restricted-imports': ['error', {
        patterns: [{ group: ['**/db/generated/*', '**/db/generated/**'], message: 'The API speaks through server/db repositories and their types, not Prisma-generated types.' }],
      }],
    },
  },
];

export default tseslint.config(
  { ignores: ['node_modules/**', 'web/dist/**', 'data/**', 'test-artefacts/**', 'server/db/generated/**', 'coverage/**', 'build/**'] },
  js.configs.recommended,
  ...tseslint.configs.recommended,
  {
    languageOptions: {
      globals: {
        console: 'readonly', process: 'readonly', Buffer: 'readonly', URL: 'readonly', setTimeout: 'readonly',
        clearTimeout: 'readonly', setInterval: 'readonly', clearInterval: 'readonly', window: 'readonly',
        document: 'readonly', fetch: 'readonly', performance: 'readonly', structuredClone: 'readonly',
      },
    },
    rules: {
      '@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
      '@typescript-eslint/no-explicit-any': 'error',
    },
  },
  ...roomRules,
);
