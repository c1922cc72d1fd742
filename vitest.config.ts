import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    // The big streaming and reference-tool tests read files of a few hundred MB;
    // two cores are shared, so give them room without making any test timed.
    testTimeout: 120_000,
    hookTimeout: 120_000,
    pool: 'forks',
  },
});
