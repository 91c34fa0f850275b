export * from "./learner.js";
export * from "./binning/bin-mapper.js";
export * from "./boosted/index.js";
