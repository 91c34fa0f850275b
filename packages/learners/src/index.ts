export * from "./learner.js";
export * from "./binning/bin-mapper.js";
export * from "./params.js";
export * from "./registry.js";
export * from "./trees/index.js";
