import { defineConfig } from "vitest/config";
import path from "node:path";

export default defineConfig({
  resolve: {
    alias: {
      "@": path.resolve(import.meta.dirname),
      // Next resolves `server-only` under the react-server condition (an empty module); plain Node
      // gets the module that throws. Tests call the data layer directly, so they get the empty one.
      "server-only": path.resolve(import.meta.dirname, "node_modules/server-only/empty.js"),
    },
  },
  test: {
    include: ["tests/**/*.test.ts"],
    environment: "node",
    testTimeout: 60_000,
    hookTimeout: 180_000,
    pool: "forks",
    globalSetup: ["tests/setup/global-db.ts"],
  },
});
