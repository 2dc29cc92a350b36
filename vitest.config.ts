import { defineConfig } from "vitest/config";

// Tests run without the React Router plugin: loaders and actions are called directly
// or through a production build's request handler.
export default defineConfig({
  resolve: { tsconfigPaths: true },
  test: {
    include: ["tests/**/*.test.ts", "tests/**/*.test.tsx"],
    globalSetup: ["tests/support/global-setup.ts"],
    setupFiles: ["tests/support/no-console-errors.ts"],
    testTimeout: 30_000,
    hookTimeout: 60_000,
  },
});
