export * from "./learner.js";
export * from "./binning/bin-mapper.js";
export * from "./linear/index.js";
export * from "./knn/index.js";
