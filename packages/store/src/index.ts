export * from "./run-store.js";
