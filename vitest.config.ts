import { defineConfig } from "vitest/config";
import { soakTimeout } from "./test/faults/soak.js";

export default defineConfig({
  test: {
    include: ["packages/*/src/**/*.test.ts", "packages/*/test/**/*.test.ts", "test/**/*.test.ts"],
    exclude: ["**/node_modules/**", "**/dist/**"],
    pool: "forks",
    // `npm run soak` (NIGHTSHIFT_SOAK) repeats the fault tests' work SOAK_FACTOR times: their timeouts grow with it.
    testTimeout: soakTimeout(60_000),
    hookTimeout: soakTimeout(60_000),
  },
});
