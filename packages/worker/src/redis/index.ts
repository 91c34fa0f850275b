export * from "./accept-job.js";
export type { FoldTask } from "./fold-thread.js";
export * from "./pack-cache.js";
export * from "./queue-layout.js";
export * from "./queue-worker.js";
export * from "./redis-url.js";
export * from "./redis-watch.js";
