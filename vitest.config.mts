import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    globalSetup: ['test/globalSetup.ts'],
    environment: 'node',
    testTimeout: 60_000,
    hookTimeout: 600_000,
    pool: 'forks',
  },
});
