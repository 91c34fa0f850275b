export * from "./learner.js";
export * from "./binning/bin-mapper.js";
export * from "./params.js";
export * from "./registry.js";
export * from "./trees/index.js";
export * from "./boosted/index.js";
export * from "./linear/index.js";
export * from "./knn/index.js";
