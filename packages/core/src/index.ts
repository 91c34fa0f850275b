export * from "./errors.js";
export * from "./frame.js";
export * from "./random.js";
export * from "./task.js";
export * from "./csv/index.js";
export * from "./dataset/index.js";
export * from "./splits/index.js";
