export * from "./distributions.js";
export * from "./families.js";
export * from "./plan-schema.js";
export * from "./read-plan.js";
export * from "./job-schema.js";
export * from "./result-schema.js";
