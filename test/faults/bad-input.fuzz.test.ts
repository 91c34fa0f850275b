import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { parseCsvDataset } from "../../packages/core/src/csv/read-csv.js";
import { InputError } from "../../packages/core/src/errors.js";
import { parsePlan } from "../../packages/core/src/plan/read-plan.js";

/** A call on small input that takes longer than this is treated as a hang. */
const SLOW_MS = 2000;

function timed<T>(call: () => T): { value?: T; error?: unknown; ms: number } {
  const start = performance.now();
  try {
    const value = call();
    return { value, ms: performance.now() - start };
  } catch (error) {
    return { error, ms: performance.now() - start };
  }
}

/** Either a result, or one InputError whose message starts with `source`. Anything else is a bug. */
function expectResultOrInputError(call: () => unknown, source: string): void {
  const outcome = timed(call);
  expect(outcome.ms).toBeLessThan(SLOW_MS);
  if (outcome.error === undefined) return;
  if (!(outcome.error instanceof InputError)) throw outcome.error;
  expect(outcome.error.message.startsWith(source)).toBe(true);
}

const fieldPiece = fc.oneof(
  fc.constantFrom("", "1", "-2.5", "1e3", "NA", "?", "null", "a", "b", "yes", "no", "true", "0x1F", "Infinity", " 3 ", "\"", "\"\"", "\uFEFF", ",", ";", "\t", "\r", "\n", "\r\n", "y", "x"),
  fc.string({ maxLength: 6 }),
  fc.string({ unit: "binary", maxLength: 8 }),
);
const field = fc.array(fieldPiece, { maxLength: 4 }).map((pieces) => pieces.join(""));
const ragged = fc.array(fc.array(field, { minLength: 0, maxLength: 6 }), { maxLength: 12 });

/** Malformed CSV text: ragged rows of odd fields joined by a random delimiter and line end, then mutated. */
const malformedCsv = fc
  .record({
    header: fc.array(fc.constantFrom("x", "y", "c", "", "y", "\uFEFFy", "\"y\"", "x\"", "z"), { maxLength: 5 }),
    rows: ragged,
    delimiter: fc.constantFrom(",", ";", "\t", "|"),
    mixed: fc.boolean(),
    lineEnd: fc.constantFrom("\n", "\r\n", "\r"),
    trailer: fc.constantFrom("", "\n", "\"", "\"abc", "\uFEFF", "\0", "x".repeat(70_000)),
    prefix: fc.constantFrom("", "\uFEFF", "\uFEFF\uFEFF", "\n", "\"", "sep=;\n"),
  })
  .map(({ header, rows, delimiter, mixed, lineEnd, trailer, prefix }) => {
    const lines = [header, ...rows].map((cells, i) => cells.join(mixed && i % 2 === 1 ? "," : delimiter));
    return prefix + lines.join(lineEnd) + trailer;
  });

const targetOptions = fc.record(
  {
    target: fc.constantFrom("y", "x", "z", "c"),
    task: fc.constantFrom("binary", "multiclass", "regression" as const),
    ignore: fc.array(fc.constantFrom("x", "c", "z"), { maxLength: 2 }),
    categorical: fc.array(fc.constantFrom("x", "c", "y"), { maxLength: 2 }),
    group: fc.constantFrom("x", "c", "g"),
    missing: fc.array(fc.constantFrom(".", "-", "a", ""), { maxLength: 2 }),
  },
  { requiredKeys: ["target"] },
);

describe("malformed CSV", () => {
  it("gives a dataset or one InputError naming the file, never another error or a hang", () => {
    fc.assert(
      fc.property(malformedCsv, targetOptions, (text, options) => {
        expectResultOrInputError(() => parseCsvDataset(text, "fuzz.csv", options), "fuzz.csv");
      }),
      { seed: 8_001, numRuns: 3000 },
    );
  });
});

/** A valid plan as a JS object, serialised to YAML by hand. */
const PLAN_BASE = {
  name: "fuzz",
  data: { train: "t.csv", target: "y" },
  budget: { trials: 10 },
  families: { forest: { trees: { int: [5, 15] } } },
};

const badValue = fc.oneof(
  fc.constantFrom<unknown>(null, true, -1, 0, 1.5, 1e9, "text", "", [], [1, 2], { a: 1 }, { int: [5, 1] }, { log_uniform: [0, 1] }, { choice: [] }, { normal: [0, 1] }),
  fc.string({ maxLength: 5 }),
  fc.double(),
);
const pathKey = fc.constantFrom("name", "seed", "data", "budget", "families", "folds", "halving", "ensemble", "task", "metric", "data.train", "data.target", "data.holdout", "data.ignore", "budget.trials", "budget.hours", "folds.k", "folds.repeats", "halving.eta", "families.forest", "families.forest.trees", "families.forest.weight", "families.jungle", "ensemble.selection.rounds", "ensemble.stacking.top", "data.extra", "budget.nights", "zzz", "families.forest.trees.int");

function setPath(target: Record<string, unknown>, path: string, value: unknown): void {
  const keys = path.split(".");
  let node = target;
  for (const key of keys.slice(0, -1)) {
    if (node[key] === null || typeof node[key] !== "object" || Array.isArray(node[key])) node[key] = {};
    node = node[key] as Record<string, unknown>;
  }
  node[keys[keys.length - 1]] = value;
}

describe("malformed plans", () => {
  it("throw one InputError naming the key path of a schema problem", () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(pathKey, badValue), { minLength: 1, maxLength: 3 }), (edits) => {
        const plan = structuredClone(PLAN_BASE) as Record<string, unknown>;
        for (const [path, value] of edits) setPath(plan, path, structuredClone(value));
        const text = JSON.stringify(plan, null, 2);
        const outcome = timed(() => parsePlan(text, "fuzz.plan.yaml"));
        expect(outcome.ms).toBeLessThan(SLOW_MS);
        if (outcome.error === undefined) return;
        if (!(outcome.error instanceof InputError)) throw outcome.error;
        // A schema problem names its key path (or "(plan)" for the whole plan) after the location.
        expect(outcome.error.message).toMatch(/^fuzz\.plan\.yaml(:\d+:\d+)?: ([A-Za-z_][\w.]*|\(plan\)|a plan must be)/);
        const named = edits.some(([path]) => outcome.error instanceof Error && outcome.error.message.includes(path.split(".")[0]));
        expect(named).toBe(true);
      }),
      { seed: 8_003, numRuns: 2000 },
    );
  });

  it("throw one InputError with line:col for text that is not YAML", () => {
    fc.assert(
      fc.property(fc.string({ maxLength: 80 }), fc.string({ unit: "binary", maxLength: 40 }), (a, b) => {
        const outcome = timed(() => parsePlan(`name: fuzz\n${a}${b}`, "fuzz.plan.yaml"));
        expect(outcome.ms).toBeLessThan(SLOW_MS);
        if (outcome.error === undefined) return;
        if (!(outcome.error instanceof InputError)) throw outcome.error;
        expect(outcome.error.message.startsWith("fuzz.plan.yaml")).toBe(true);
        if (/not valid YAML/.test(outcome.error.message)) expect(outcome.error.message).toMatch(/^fuzz\.plan\.yaml:\d+:\d+: /);
      }),
      { seed: 8_004, numRuns: 2000 },
    );
  });
});
