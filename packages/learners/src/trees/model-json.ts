import { TaskSchema } from "@nightshift/core";
import { z } from "zod";
import { type BinMapper, binCount, binMapperFromJSON, binMapperToJSON, MAX_VALUE_BINS } from "../binning/bin-mapper.js";
import type { ModelJson } from "../learner.js";
import type { TreeEnsembleModel, TreeFamily } from "./fit-trees.js";
import { BITSET_WORDS, type TreeArrays } from "./tree-model.js";

/**
 * JSON form of a tree ensemble. Typed arrays are stored as base64 of their bytes
 * (little-endian, as on every platform Node runs on), so a round trip is bit-identical.
 */
const TreeJsonSchema = z
  .object({
    nodes: z.number().int().min(1),
    feature: z.string(),
    threshold: z.string(),
    missing_left: z.string(),
    left: z.string(),
    right: z.string(),
    category_set: z.string(),
    bitsets: z.string(),
    leaf_values: z.string(),
  })
  .strict();

const ModelJsonSchema = z
  .object({
    family: z.enum(["tree", "forest", "extra_trees"]),
    format: z.literal(1),
    task: TaskSchema,
    width: z.number().int().min(1),
    features: z.number().int().min(1),
    mapper: z.unknown(),
    trees: z.array(TreeJsonSchema).min(1),
  })
  .strict();

export function treeModelToJSON(model: TreeEnsembleModel): ModelJson {
  return {
    family: model.family,
    format: 1,
    task: model.task,
    width: model.width,
    features: model.featureCount,
    mapper: binMapperToJSON(model.mapper),
    trees: model.trees.map((tree) => ({
      nodes: tree.nodeCount,
      feature: toBase64(tree.feature),
      threshold: toBase64(tree.threshold),
      missing_left: toBase64(tree.missingLeft),
      left: toBase64(tree.left),
      right: toBase64(tree.right),
      category_set: toBase64(tree.categorySet),
      bitsets: toBase64(tree.bitsets),
      leaf_values: toBase64(tree.leafValues),
    })),
  };
}

/** Reads a model written by treeModelToJSON; checks every index so a damaged file cannot loop or read out of bounds. */
export function treeModelFromJSON(family: TreeFamily, json: ModelJson): TreeEnsembleModel {
  const parsed = ModelJsonSchema.safeParse(json);
  if (!parsed.success) throw new TypeError(`${family} model: ${parsed.error.issues.map((i) => `${i.path.join(".") || "(root)"}: ${i.message}`).join("; ")}`);
  const raw = parsed.data;
  if (raw.family !== family) throw new TypeError(`${family} model: the file holds a ${raw.family} model`);
  const mapper = binMapperFromJSON(raw.mapper);
  if (mapper.features.length !== raw.features) throw new TypeError(`${family} model: ${mapper.features.length} binned features, expected ${raw.features}`);
  const trees = raw.trees.map((tree, t): TreeArrays => {
    const arrays: TreeArrays = {
      nodeCount: tree.nodes,
      feature: fromBase64(tree.feature, Int32Array),
      threshold: fromBase64(tree.threshold, Uint8Array),
      missingLeft: fromBase64(tree.missing_left, Uint8Array),
      left: fromBase64(tree.left, Int32Array),
      right: fromBase64(tree.right, Int32Array),
      categorySet: fromBase64(tree.category_set, Int32Array),
      bitsets: fromBase64(tree.bitsets, Uint32Array),
      leafValues: fromBase64(tree.leaf_values, Float64Array),
    };
    const problem = checkTree(arrays, raw.width, mapper);
    if (problem) throw new TypeError(`${family} model: tree ${t}: ${problem}`);
    return arrays;
  });
  return { family, task: raw.task, width: raw.width, featureCount: raw.features, mapper, trees };
}

function checkTree(tree: TreeArrays, width: number, mapper: BinMapper): string | null {
  const n = tree.nodeCount;
  for (const [name, array] of Object.entries({ feature: tree.feature, threshold: tree.threshold, missingLeft: tree.missingLeft, left: tree.left, right: tree.right, categorySet: tree.categorySet })) {
    if (array.length !== n) return `${name} has ${array.length} entries for ${n} nodes`;
  }
  if (tree.leafValues.length % width !== 0) return "leaf values do not fill whole rows";
  const leaves = tree.leafValues.length / width;
  const sets = tree.bitsets.length / BITSET_WORDS;
  if (!Number.isInteger(sets)) return "category sets are not whole";
  for (let node = 0; node < n; node++) {
    const f = tree.feature[node];
    if (f < 0) {
      if (!(tree.left[node] >= 0 && tree.left[node] < leaves)) return `leaf ${node} points outside the leaf values`;
      continue;
    }
    if (f >= mapper.features.length) return `node ${node} splits on unknown feature ${f}`;
    if (!(tree.left[node] > node && tree.left[node] < n && tree.right[node] > node && tree.right[node] < n)) return `node ${node} has children out of order`;
    const set = tree.categorySet[node];
    if (set >= sets) return `node ${node} names a missing category set`;
    if (set < 0 && (mapper.features[f].kind !== "numeric" || tree.threshold[node] >= Math.min(binCount(mapper.features[f]), MAX_VALUE_BINS))) {
      return `node ${node} has a threshold outside the bins of feature ${f}`;
    }
  }
  return null;
}

type TypedArrayConstructor<T> = { new (length: number): T; readonly BYTES_PER_ELEMENT: number };

function toBase64(array: Int32Array | Uint8Array | Uint32Array | Float64Array): string {
  return Buffer.from(array.buffer, array.byteOffset, array.byteLength).toString("base64");
}

function fromBase64<T extends Int32Array | Uint8Array | Uint32Array | Float64Array>(text: string, Kind: TypedArrayConstructor<T>): T {
  const bytes = Buffer.from(text, "base64");
  if (bytes.length % Kind.BYTES_PER_ELEMENT !== 0) throw new TypeError(`array of ${bytes.length} bytes is not whole ${Kind.BYTES_PER_ELEMENT}-byte values`);
  const out = new Kind(bytes.length / Kind.BYTES_PER_ELEMENT);
  new Uint8Array(out.buffer).set(bytes);
  return out;
}
