export * from "./knn-learner.js";
export * from "./neighbour-search.js";
export * from "./params.js";
export * from "./screening-kernel.js";
