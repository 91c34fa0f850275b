export * from "./knn-learner.js";
export { nearestNeighbours, screeningMargin, type Neighbours } from "./neighbour-search.js";
export * from "./params.js";
