import { reactRouter } from "@react-router/dev/vite";
import tailwindcss from "@tailwindcss/vite";
import { defineConfig } from "vitest/config";

// Vitest loads this file too; the React Router plugin only belongs to the app build.
const underTest = Boolean(process.env.VITEST);

export default defineConfig({
  plugins: [tailwindcss(), ...(underTest ? [] : [reactRouter()])],
  build: { target: "node20" },
  ssr: {
    // Native or CommonJS-heavy server packages stay external to the server bundle.
    external: ["@libsql/client", "ioredis-mock", "fengari", "fengari-interop", "bullmq", "pino", "shapefile"],
  },
  test: {
    include: ["tests/unit/**/*.test.ts", "tests/integration/**/*.test.ts", "app/**/*.test.ts", "jobs/**/*.test.ts"],
    environment: "node",
    setupFiles: ["tests/setup.ts"],
    testTimeout: 30_000,
    hookTimeout: 30_000,
    pool: "forks",
  },
});
