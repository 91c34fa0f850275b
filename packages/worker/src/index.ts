export * from "./fold-context.js";
export * from "./fold-job.js";
export * from "./refit-job.js";
export * from "./run-job.js";
export type { ThreadSetup } from "./thread-entry.js";

/** Path of the worker-thread task module, for the local pool. */
export const THREAD_ENTRY = new URL("./thread-entry.js", import.meta.url);
export * from "./time-limit.js";
export * from "./redis/index.js";
