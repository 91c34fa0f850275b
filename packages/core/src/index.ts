export * from "./errors.js";
export * from "./frame.js";
export * from "./random.js";
export * from "./task.js";
export * from "./metrics/index.js";
