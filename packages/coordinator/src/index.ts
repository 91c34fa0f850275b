export * from "./halving.js";
export * from "./job-runner.js";
export * from "./local-pool.js";
export * from "./run-folder.js";
export * from "./run-search.js";
export * from "./scheduler.js";
export * from "./trials.js";
export * from "./final-step.js";
