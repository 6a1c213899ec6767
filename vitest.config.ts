import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    // Tests that spawn the CLI or start servers take seconds on a loaded 2-core machine; a hang still fails.
    testTimeout: 30_000,
    hookTimeout: 60_000,
  },
});
