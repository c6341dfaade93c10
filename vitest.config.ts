import { defineConfig } from 'vitest/config';

// `npm run test:long` (REELWRIGHT_LONG=1): tests that write gigabytes, outside `npm test`.
const long = process.env.REELWRIGHT_LONG === '1';

export default defineConfig({
  test: {
    projects: [
      ...(long
        ? [{ test: { name: 'long', environment: 'node', include: ['test/**/*.long-test.ts'], testTimeout: 900_000, hookTimeout: 900_000 } }]
        : []),
      {
        test: {
          name: 'unit',
          environment: 'node',
          include: ['test/**/*.test.ts'],
          exclude: ['test/e2e/**', 'node_modules/**'],
          globalSetup: ['test/setup/global-unit.ts'],
          testTimeout: 120_000,
          hookTimeout: 120_000,
        },
      },
      {
        test: {
          name: 'e2e',
          environment: 'node',
          include: ['test/e2e/**/*.test.ts'],
          globalSetup: ['test/e2e/global-setup.ts'],
          fileParallelism: false,
          // After the unit project: the browser tests take the longest.
          sequence: { groupOrder: 1 },
          testTimeout: 180_000,
          hookTimeout: 180_000,
        },
      },
    ],
  },
});
