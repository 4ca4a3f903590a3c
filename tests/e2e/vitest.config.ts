import { defineConfig } from "vitest/config";

// Browser tests against the built server (`npm run test:e2e` builds first).
export default defineConfig({
  test: {
    include: ["tests/e2e/**/*.test.ts"],
    environment: "node",
    testTimeout: 120_000,
    hookTimeout: 120_000,
    pool: "forks",
    fileParallelism: false,
  },
});
