export { type BoostedModel, boostedLearner, fitBoosted, predictBoosted } from "./boosted.js";
export { boostedFromJSON, boostedToJSON } from "./model-json.js";
export { type BoostedParams, BoostedParamsSchema, parseBoostedParams } from "./params.js";
