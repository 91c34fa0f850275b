export { ColumnSchemaSchema, datasetSchema, trainView, type ColumnSchema, type Dataset, type DatasetContent } from "./dataset.js";
export { fingerprintContent, sha256Hex } from "./fingerprint.js";
export { packDataset, unpackDataset, type PackOptions, type UnpackOptions } from "./pack.js";
