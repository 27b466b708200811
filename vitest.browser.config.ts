import { defineConfig } from "vitest/config";

// Browser tests drive Debian's Chromium against an already running server (BASE_URL), one file at a time.
export default defineConfig({
  resolve: { tsconfigPaths: true },
  test: {
    environment: "node",
    include: ["tests/browser/**/*.test.ts"],
    fileParallelism: false,
    testTimeout: 180_000,
    hookTimeout: 180_000,
  },
});
