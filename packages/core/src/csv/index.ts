export { isMissingSpelling, parseBooleanField, parseNumericField } from "./field-values.js";
export { parseCsvDataset, readCsvDataset } from "./read-csv.js";
export { parseCsvRows, readCsvRows, type PredictionRows, type ReadRowsOptions } from "./read-rows.js";
export { sniffDelimiter, type Delimiter } from "./sniff-delimiter.js";
export { MAX_INTEGER_CLASSES } from "./infer-types.js";
export type { IngestOptions } from "./table-builder.js";
