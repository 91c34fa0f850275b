import { InputError, TaskSchema } from "@nightshift/core";
import { z } from "zod";
import { type BinMapper, binMapperFromJSON, binMapperToJSON, MAX_VALUE_BINS } from "../binning/bin-mapper.js";
import type { ModelJson } from "../learner.js";
import type { BoostedModel } from "./boosted.js";
import { compileTrees } from "./predict.js";
import { BITSET_WORDS } from "./split-gain.js";
import type { TreeEnsemble } from "./tree-ensemble.js";

/**
 * JSON form of a boosted model. Node arrays are base64 of their little-endian bytes, so
 * leaf values and thresholds come back bit for bit; numbers elsewhere are JSON numbers,
 * which round-trip exactly for finite doubles.
 */
const Base64 = z.string().regex(/^[A-Za-z0-9+/]*={0,2}$/, "must be base64");

const MapperJsonSchema = z.array(
  z.union([
    z.strictObject({ kind: z.literal("numeric"), upperEdges: z.array(z.number().nullable()).min(1).max(MAX_VALUE_BINS) }),
    z.strictObject({
      kind: z.literal("categorical"),
      binOfCode: z.array(z.number().int().min(0).max(255)),
      binCount: z.number().int().min(1).max(MAX_VALUE_BINS),
    }),
  ]),
);

const BoostedJsonSchema = z.strictObject({
  family: z.literal("boosted"),
  format: z.literal(1),
  task: TaskSchema,
  labels: z.array(z.string()).nullable(),
  outputs: z.number().int().min(1),
  feature_names: z.array(z.string()),
  mapper: MapperJsonSchema,
  init: z.array(z.number()),
  stopping: z.strictObject({ rounds_run: z.number().int(), best_round: z.number().int(), validation_rows: z.number().int() }).nullable(),
  trees: z.strictObject({
    count: z.number().int().min(0),
    start: Base64,
    feature: Base64,
    threshold: Base64,
    missing_left: Base64,
    set: Base64,
    left: Base64,
    value: Base64,
    bits: Base64,
  }),
});

function encode(array: Int32Array | Uint8Array | Uint32Array | Float64Array): string {
  return Buffer.from(array.buffer, array.byteOffset, array.byteLength).toString("base64");
}

function decode<T>(text: string, make: (buffer: ArrayBuffer) => T, bytesPerValue: number, key: string): T {
  const bytes = new Uint8Array(Buffer.from(text, "base64"));
  if (bytes.byteLength % bytesPerValue !== 0) throw new InputError(`boosted model trees.${key}`, "has a byte length that is not a whole number of values");
  return make(bytes.buffer);
}

export function boostedToJSON(model: BoostedModel): ModelJson {
  const trees = model.trees;
  return {
    family: "boosted",
    format: 1,
    task: model.task,
    labels: model.labels === null ? null : [...model.labels],
    outputs: model.outputs,
    feature_names: [...model.featureNames],
    mapper: binMapperToJSON(model.mapper),
    init: Array.from(model.init),
    stopping:
      model.stopping === null
        ? null
        : { rounds_run: model.stopping.roundsRun, best_round: model.stopping.bestRound, validation_rows: model.stopping.validationRows },
    trees: {
      count: trees.treeCount,
      start: encode(trees.treeStart),
      feature: encode(trees.feature),
      threshold: encode(trees.threshold),
      missing_left: encode(trees.missingLeft),
      set: encode(trees.set),
      left: encode(trees.left),
      value: encode(trees.value),
      bits: encode(trees.bits),
    },
  };
}

export function boostedFromJSON(json: ModelJson): BoostedModel {
  const parsed = BoostedJsonSchema.safeParse(json);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    throw new InputError(`boosted model ${issue.path.map(String).join(".")}`.trimEnd(), issue.message);
  }
  const data = parsed.data;
  const mapper: BinMapper = binMapperFromJSON(data.mapper);
  const t = data.trees;
  const trees: TreeEnsemble = {
    treeCount: t.count,
    treeStart: decode(t.start, (b) => new Int32Array(b), 4, "start"),
    feature: decode(t.feature, (b) => new Int32Array(b), 4, "feature"),
    threshold: decode(t.threshold, (b) => new Int32Array(b), 4, "threshold"),
    missingLeft: decode(t.missing_left, (b) => new Uint8Array(b), 1, "missing_left"),
    set: decode(t.set, (b) => new Int32Array(b), 4, "set"),
    left: decode(t.left, (b) => new Int32Array(b), 4, "left"),
    value: decode(t.value, (b) => new Float64Array(b), 8, "value"),
    bits: decode(t.bits, (b) => new Uint32Array(b), 4, "bits"),
  };
  checkShape(data.task, data.labels, data.outputs, data.init.length, data.feature_names.length, mapper, trees.treeCount);
  checkTrees(trees, mapper);
  return {
    task: data.task,
    labels: data.labels,
    outputs: data.outputs,
    featureNames: data.feature_names,
    mapper,
    init: Float64Array.from(data.init),
    trees,
    stopping:
      data.stopping === null
        ? null
        : { roundsRun: data.stopping.rounds_run, bestRound: data.stopping.best_round, validationRows: data.stopping.validation_rows },
    compiled: compileTrees(trees, mapper),
  };
}

function fail(key: string, message: string): never {
  throw new InputError(`boosted model ${key}`, message);
}

/** Task, labels, outputs and sizes must agree with each other. */
function checkShape(
  task: string,
  labels: readonly string[] | null,
  outputs: number,
  initLength: number,
  featureNames: number,
  mapper: BinMapper,
  treeCount: number,
): void {
  if (task === "regression" ? labels !== null : labels === null) fail("labels", `must be ${task === "regression" ? "null" : "given"} for a ${task} task`);
  const expected = task === "multiclass" ? (labels?.length ?? 0) : 1;
  if (outputs !== expected) fail("outputs", `must be ${expected} for a ${task} task (got ${outputs})`);
  if (task === "binary" && labels?.length !== 2) fail("labels", "a binary task needs 2 labels");
  if (initLength !== outputs) fail("init", `needs ${outputs} values (got ${initLength})`);
  if (featureNames !== mapper.features.length) fail("feature_names", `needs one name per feature of the mapper (${mapper.features.length})`);
  if (treeCount % outputs !== 0) fail("trees.count", `must be a multiple of ${outputs} (one tree per output per round)`);
}

/** A model read from a file must describe trees that prediction can walk safely. */
function checkTrees(trees: TreeEnsemble, mapper: BinMapper): void {
  if (trees.treeStart.length !== trees.treeCount + 1 || trees.treeStart[0] !== 0) fail("trees.start", "does not match the tree count");
  const nodes = trees.feature.length;
  if (trees.treeStart[trees.treeCount] !== nodes) fail("trees.start", "does not end at the node count");
  for (const [key, length] of [
    ["threshold", trees.threshold.length],
    ["missing_left", trees.missingLeft.length],
    ["set", trees.set.length],
    ["left", trees.left.length],
    ["value", trees.value.length],
  ] as const) {
    if (length !== nodes) fail(`trees.${key}`, `needs ${nodes} values (got ${length})`);
  }
  const sets = trees.bits.length / BITSET_WORDS;
  if (!Number.isInteger(sets)) fail("trees.bits", `needs a multiple of ${BITSET_WORDS} words`);
  for (let tree = 0; tree < trees.treeCount; tree++) {
    const start = trees.treeStart[tree];
    const size = trees.treeStart[tree + 1] - start;
    if (size < 1) fail("trees.start", `tree ${tree} has no nodes`);
    for (let local = 0; local < size; local++) {
      const n = start + local;
      const f = trees.feature[n];
      if (f < 0) continue;
      if (f >= mapper.features.length) fail("trees.feature", `node ${n} uses feature ${f} of ${mapper.features.length}`);
      // Children follow their parent, which keeps every walk finite.
      const left = trees.left[n];
      if (!(left > local && left + 1 < size)) fail("trees.left", `node ${n} has children outside its tree`);
      const bins = mapper.features[f];
      if (trees.set[n] >= 0) {
        if (bins.kind !== "categorical" || trees.set[n] >= sets) fail("trees.set", `node ${n} has an invalid category set`);
      } else if (bins.kind !== "numeric" || trees.threshold[n] < 0 || trees.threshold[n] >= bins.upperEdges.length) {
        fail("trees.threshold", `node ${n} has an invalid threshold`);
      }
    }
  }
}
