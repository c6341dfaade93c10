import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    projects: [
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
