import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
    // Finds or starts the tests' Redis (REDIS_URL, or a private redis-server for this run).
    globalSetup: ['test/helpers/redis-setup.ts'],
  },
});
