import { defineConfig } from "vitest/config";

// Separate from vite.config.ts: the React Router plugin must not load under vitest.
// Default environment is node; component tests opt into jsdom with a `// @vitest-environment jsdom` docblock.
export default defineConfig({
  resolve: { tsconfigPaths: true },
  test: {
    environment: "node",
    include: ["app/**/*.test.{ts,tsx}", "tracer/**/*.test.ts", "tests/unit/**/*.test.{ts,tsx}", "tests/integration/**/*.test.{ts,tsx}"],
    testTimeout: 60_000,
    hookTimeout: 120_000,
  },
});
