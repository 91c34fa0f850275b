import { createHash } from "node:crypto";
import { readdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import fc from "fast-check";
import { afterAll, describe, expect, it } from "vitest";
import { parseCsvDataset, readCsvDataset } from "../../packages/core/src/csv/read-csv.js";
import { InputError } from "../../packages/core/src/errors.js";
import { MISSING_CODE } from "../../packages/core/src/frame.js";
import { parsePlan } from "../../packages/core/src/plan/read-plan.js";
import { nightshift, tempDir as makeTempDir, writeSmallTurbines } from "../e2e/helpers.js";
import { fuzzRuns } from "./soak.js";

const scratch: string[] = [];
afterAll(() => {
  for (const dir of scratch) rmSync(dir, { recursive: true, force: true });
});

function tempDir(prefix: string): string {
  const dir = makeTempDir(prefix);
  scratch.push(dir);
  return dir;
}

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
const cleanField = fc.constantFrom("1", "2.5", "-3", "a", "b", "NA", "", "yes", "no", "p", "q");
/** Mostly rows as wide as the usual three-column header, some ragged, some made of odd fields. */
const ragged = fc.array(
  fc.oneof(
    { weight: 4, arbitrary: fc.array(fc.oneof({ weight: 4, arbitrary: cleanField }, { weight: 1, arbitrary: field }), { minLength: 3, maxLength: 3 }) },
    { weight: 1, arbitrary: fc.array(field, { maxLength: 6 }) },
  ),
  { maxLength: 12 },
);

/** Malformed CSV text: ragged rows of odd fields joined by a random delimiter and line end, then mutated. */
const malformedCsv = fc
  .record({
    header: fc.oneof(
      { weight: 3, arbitrary: fc.constant(["x", "c", "y"]) },
      { weight: 2, arbitrary: fc.array(fc.constantFrom("x", "y", "c", "", "y", "\uFEFFy", "\"y\"", "x\"", "z", "g"), { maxLength: 5 }) },
    ),
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
      fuzzRuns(8_001, 3000),
    );
  });
});

describe("malformed CSV files read by streaming", () => {
  it("give the same dataset or the same InputError as the in-memory parse", async () => {
    const dir = tempDir("fuzz-stream");
    let n = 0;
    await fc.assert(
      fc.asyncProperty(malformedCsv, targetOptions, async (text, options) => {
        const path = join(dir, `f${n++}.csv`);
        writeFileSync(path, text);
        const start = performance.now();
        let streamed: { fingerprint?: string; message?: string };
        try {
          streamed = { fingerprint: (await readCsvDataset(path, options)).fingerprint };
        } catch (error) {
          if (!(error instanceof InputError)) throw error;
          streamed = { message: error.message.slice(path.length) };
        }
        expect(performance.now() - start).toBeLessThan(SLOW_MS);
        const inMemory = timed(() => parseCsvDataset(text, path, options));
        if (inMemory.error !== undefined && !(inMemory.error instanceof InputError)) throw inMemory.error;
        const expected = inMemory.error instanceof InputError ? { message: inMemory.error.message.slice(path.length) } : { fingerprint: inMemory.value!.fingerprint };
        expect(streamed).toEqual(expected);
      }),
      fuzzRuns(8_009, 400),
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

/** YAML that parses but is hostile to a plan reader: aliases that expand too far, keys a JS object mishandles, ranges past a double. */
const hostileEntry = fc.oneof(
  fc.integer({ min: 5, max: 8 }).map((depth) => {
    const levels = ["l0: &l0 [x, x, x, x, x, x, x, x, x]"];
    for (let d = 1; d < depth; d++) levels.push(`l${d}: &l${d} [${Array(9).fill(`*l${d - 1}`).join(", ")}]`);
    return { where: "top", text: levels.join("\n") };
  }),
  fc.constantFrom(
    { where: "family", text: "__proto__: { int: [1, 2] }" },
    { where: "family", text: "? [a, b] : 2" },
    { where: "family", text: "? { a: 1 } : 2" },
    { where: "family", text: "~: 2" },
    { where: "family", text: "'': 2" },
    { where: "family", text: "trees: { int: [1, 1e300] }" },
    { where: "family", text: "trees: { uniform: [-1e308, 1e308] }" },
    { where: "family", text: "trees: { int: [1, 2], log: yes }" },
    { where: "top", text: "__proto__: { polluted: 1 }" },
    { where: "families", text: "__proto__: { trees: 3 }" },
  ),
);

describe("hostile plans", () => {
  it("throw one InputError with a location, never another error, and pollute nothing", () => {
    fc.assert(
      fc.property(fc.array(hostileEntry, { minLength: 1, maxLength: 2 }), (entries) => {
        const top = entries.filter((e) => e.where === "top").map((e) => e.text);
        const family = entries.filter((e) => e.where === "family").map((e) => `    ${e.text}`);
        const families = entries.filter((e) => e.where === "families").map((e) => `  ${e.text}`);
        const text = ["name: fuzz", "data: { train: t.csv, target: y }", "budget: { trials: 3 }", ...top, "families:", ...families, "  forest:", ...family, "    depth: 3"].join("\n");
        const outcome = timed(() => parsePlan(text, "hostile.plan.yaml"));
        expect(outcome.ms).toBeLessThan(SLOW_MS);
        if (!(outcome.error instanceof InputError)) throw outcome.error ?? new Error(`accepted: ${text}`);
        expect(outcome.error.message).toMatch(/^hostile\.plan\.yaml(:\d+:\d+)?: /);
        expect(({} as Record<string, unknown>).polluted).toBeUndefined();
      }),
      fuzzRuns(8_010, 300),
    );
  });
});

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
      fuzzRuns(8_003, 2000),
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
      fuzzRuns(8_004, 2000),
    );
  });
});

/** One generated column: its kind and each row's value (null = missing). */
type GenColumn =
  | { kind: "numeric"; name: string; cells: (number | null)[] }
  | { kind: "boolean"; name: string; cells: (boolean | null)[] }
  | { kind: "categorical"; name: string; cells: (string | null)[] };

interface GenTable {
  readonly features: GenColumn[];
  /** Class labels, or numbers for a regression target; null = missing (the row is dropped). */
  readonly target: { kind: "classes"; cells: (string | null)[] } | { kind: "values"; cells: (number | null)[] };
  readonly delimiter: "," | ";" | "\t";
  readonly lineEnd: "\n" | "\r\n";
  readonly missing: string[];
  readonly quoteAll: boolean;
  readonly trailingNewline: boolean;
}

const columnName = fc.stringMatching(/^[a-z][a-z0-9_]{0,7}$/);
const finite = fc.double({ min: -1e6, max: 1e6, noNaN: true }).map((v) => (Object.is(v, -0) ? 0 : v));
/** Text that no rule reads as a number, boolean or missing: starts with "c", ends with "z" (no edge whitespace). */
const category = fc.string({ maxLength: 6, unit: fc.constantFrom("a", "b", " ", ",", ";", "\t", "\"", "\n", "é", "1", ".") }).map((s) => `c${s}z`);

function genTable(rows: number): fc.Arbitrary<GenTable> {
  const maybe = <T>(arb: fc.Arbitrary<T>) => fc.option(arb, { freq: 5, nil: null });
  const cells = <T>(arb: fc.Arbitrary<T>, first: T) =>
    fc.array(maybe(arb), { minLength: rows - 1, maxLength: rows - 1 }).map((rest) => [first, ...rest]);
  const feature = fc.oneof(
    cells(finite, 1.25).map((c) => ({ kind: "numeric" as const, cells: c })),
    cells(fc.boolean(), true).map((c) => ({ kind: "boolean" as const, cells: c })),
    cells(category, "cfirstz").map((c) => ({ kind: "categorical" as const, cells: c })),
  );
  const target = fc.oneof(
    fc
      .array(maybe(fc.constantFrom("pos", "neg", "mid")), { minLength: rows - 2, maxLength: rows - 2 })
      .map((rest) => ({ kind: "classes" as const, cells: ["pos", "neg", ...rest] })),
    fc.array(maybe(finite), { minLength: rows - 1, maxLength: rows - 1 }).map((rest) => ({ kind: "values" as const, cells: [0.5, ...rest] })),
  );
  return fc.record({
    names: fc.uniqueArray(columnName, { minLength: 5, maxLength: 5 }),
    features: fc.array(feature, { minLength: 1, maxLength: 4 }),
    target,
    delimiter: fc.constantFrom(",", ";", "\t" as const),
    lineEnd: fc.constantFrom("\n", "\r\n" as const),
    missing: fc.subarray(["", "NA", "?", "null", "NaN", "na"], { minLength: 1 }),
    quoteAll: fc.boolean(),
    trailingNewline: fc.boolean(),
  }).map(({ names, features, ...rest }) => ({ ...rest, features: features.map((f, i) => ({ ...f, name: names[i] }) as GenColumn) }));
}

/** The CSV text of a generated table; fields holding a delimiter, quote or line end are quoted (RFC 4180). */
function serialise(table: GenTable, targetName: string, pickMissing: (row: number, col: number) => string): string {
  const quote = (text: string) => (table.quoteAll || /[,;\t"\r\n]/.test(text) ? `"${text.replaceAll("\"", "\"\"")}"` : text);
  const header = [...table.features.map((f) => f.name), targetName].map(quote).join(table.delimiter);
  const lines = [header];
  const rowCount = table.target.cells.length;
  for (let r = 0; r < rowCount; r++) {
    const cells = [...table.features.map((f) => f.cells[r]), table.target.cells[r]];
    lines.push(
      cells
        .map((cell, c) => {
          if (cell === null) return pickMissing(r, c) === "" ? "" : quote(pickMissing(r, c));
          if (typeof cell === "boolean") return quote(cell ? (r % 2 ? "yes" : "True") : r % 2 ? "no" : "FALSE");
          return quote(String(cell));
        })
        .join(table.delimiter),
    );
  }
  return lines.join(table.lineEnd) + (table.trailingNewline ? table.lineEnd : "");
}

describe("valid generated CSV", () => {
  it("loads with the values of the generated table", () => {
    const arb = fc.integer({ min: 3, max: 25 }).chain((rows) => genTable(rows));
    fc.assert(
      fc.property(arb, (table) => {
        const targetName = "target_col";
        const text = serialise(table, targetName, (r, c) => table.missing[(r + c) % table.missing.length]);
        const dataset = parseCsvDataset(text, "valid.csv", { target: targetName });
        const kept: number[] = [];
        table.target.cells.forEach((cell, r) => {
          if (cell !== null) kept.push(r);
        });
        expect(dataset.rowCount).toBe(kept.length);
        expect(dataset.droppedRows).toBe(table.target.cells.length - kept.length);
        expect(dataset.features.map((f) => f.name)).toEqual(table.features.map((f) => f.name));
        table.features.forEach((generated, c) => {
          const column = dataset.features[c];
          expect(column.kind).toBe(generated.kind);
          kept.forEach((r, i) => {
            const cell = generated.cells[r];
            if (column.kind === "categorical") {
              if (cell === null) expect(column.codes[i]).toBe(MISSING_CODE);
              else expect(column.vocabulary[column.codes[i]]).toBe(cell);
            } else if (cell === null) expect(column.values[i]).toBeNaN();
            else expect(column.values[i]).toBe(Math.fround(typeof cell === "boolean" ? Number(cell) : (cell as number)));
          });
        });
        const target = dataset.target;
        if (table.target.kind === "classes") {
          if (target.kind !== "classes") throw new Error(`class target read as ${target.kind}`);
          kept.forEach((r, i) => expect(target.labels[target.codes[i]]).toBe(table.target.cells[r]));
        } else {
          if (target.kind !== "values") throw new Error(`numeric target read as ${target.kind}`);
          kept.forEach((r, i) => expect(target.values[i]).toBe(table.target.cells[r]));
        }
      }),
      fuzzRuns(8_002, 1000),
    );
  });
});

/** One way to break a valid file, applied at a generated position. */
const mutation = fc.record({
  kind: fc.constantFrom("drop-cell", "extra-cell", "stray-quote", "bom", "truncate", "binary", "long-field", "duplicate-name", "all-missing-target", "one-class", "header-only", "nul", "lone-cr"),
  at: fc.nat(),
  byte: fc.integer({ min: 0, max: 0xffff }),
});

function mutate(text: string, table: GenTable, m: { kind: string; at: number; byte: number }): { text: string; target: string } {
  const lines = text.split(table.lineEnd);
  const at = m.at % Math.max(1, text.length);
  const line = 1 + (m.at % Math.max(1, lines.length - 1));
  if (lines.length < 2 && (m.kind === "drop-cell" || m.kind === "extra-cell")) return { text, target: "target_col" };
  switch (m.kind) {
    case "drop-cell":
      lines[line] = lines[line].split(table.delimiter).slice(1).join(table.delimiter);
      return { text: lines.join(table.lineEnd), target: "target_col" };
    case "extra-cell":
      lines[line] += `${table.delimiter}1`;
      return { text: lines.join(table.lineEnd), target: "target_col" };
    case "stray-quote":
      return { text: `${text.slice(0, at)}"${text.slice(at)}`, target: "target_col" };
    case "bom":
      return { text: `${text.slice(0, at)}\uFEFF${text.slice(at)}`, target: "target_col" };
    case "truncate":
      return { text: text.slice(0, at), target: "target_col" };
    case "binary":
      return { text: `${text.slice(0, at)}${String.fromCharCode(m.byte)}${text.slice(at)}`, target: "target_col" };
    case "long-field":
      return { text: `${text.slice(0, at)}${"9".repeat(100_000 + (m.byte % 1000))}${text.slice(at)}`, target: "target_col" };
    case "duplicate-name":
      lines[0] = `target_col${table.delimiter}${lines[0]}`;
      return { text: lines.map((l, i) => (i === 0 ? l : `1${table.delimiter}${l}`)).join(table.lineEnd), target: "target_col" };
    case "all-missing-target":
      return { text: lines.map((l, i) => (i === 0 ? l : `${l.split(table.delimiter).slice(0, -1).join(table.delimiter)}${table.delimiter}NA`)).join(table.lineEnd), target: "target_col" };
    case "one-class":
      return { text: lines.map((l, i) => (i === 0 ? l : `${l.split(table.delimiter).slice(0, -1).join(table.delimiter)}${table.delimiter}same`)).join(table.lineEnd), target: "target_col" };
    case "header-only":
      return { text: lines[0] + table.lineEnd, target: "target_col" };
    case "nul":
      return { text: text.replaceAll(table.delimiter, m.byte % 2 ? "\0" : table.delimiter).slice(0, at + 1), target: "target_col" };
    default:
      return { text: text.replaceAll("\n", "\r").replaceAll("\r\r", "\r"), target: "target_col" };
  }
}

describe("valid CSV broken in one place", () => {
  it("gives a dataset or one InputError naming the file (and line for a ragged row)", () => {
    const arb = fc.tuple(fc.integer({ min: 3, max: 15 }).chain((rows) => genTable(rows)), fc.array(mutation, { minLength: 1, maxLength: 3 }));
    fc.assert(
      fc.property(arb, ([table, mutations]) => {
        let text = serialise(table, "target_col", () => "NA");
        for (const m of mutations) text = mutate(text, table, m).text;
        const outcome = timed(() => parseCsvDataset(text, "broken.csv", { target: "target_col" }));
        expect(outcome.ms).toBeLessThan(SLOW_MS);
        if (outcome.error === undefined) return;
        if (!(outcome.error instanceof InputError)) throw outcome.error;
        expect(outcome.error.message.startsWith("broken.csv")).toBe(true);
        if (/fields|quote/i.test(outcome.error.message)) expect(outcome.error.message).toMatch(/^broken\.csv:\d+/);
      }),
      fuzzRuns(8_005, 2500),
    );
  });
});

describe("a ragged row", () => {
  it("is reported on its own line", () => {
    const arb = fc.tuple(fc.integer({ min: 3, max: 15 }).chain((rows) => genTable(rows)), fc.nat(), fc.boolean());
    fc.assert(
      fc.property(arb, ([table, pick, drop]) => {
        const text = serialise(table, "target_col", () => "NA");
        const lines = text.split(table.lineEnd);
        // Line numbers are only known here when no quoted field spans lines.
        fc.pre(table.features.every((f) => f.kind !== "categorical" || f.cells.every((cell) => cell === null || !/[\r\n]/.test(cell))));
        const row = 1 + (pick % (table.target.cells.length));
        // The target cell is last and never holds a delimiter, so cutting at the last delimiter drops exactly one field.
        lines[row] = drop ? lines[row].slice(0, lines[row].lastIndexOf(table.delimiter)) : `${lines[row]}${table.delimiter}1`;
        const outcome = timed(() => parseCsvDataset(lines.join(table.lineEnd), "ragged.csv", { target: "target_col" }));
        expect(outcome.error).toBeInstanceOf(InputError);
        expect((outcome.error as Error).message).toMatch(new RegExp(`^ragged\\.csv:${row + 1}: this row has \\d+ fields but the header has ${table.features.length + 1}`));
      }),
      fuzzRuns(8_011, 500),
    );
  });
});

describe("a file with nothing to learn from", () => {
  it("is refused at ingest when no feature column is left (not after a night of failed trials)", () => {
    const arb = fc.tuple(fc.integer({ min: 3, max: 10 }).chain((rows) => genTable(rows)), fc.boolean());
    fc.assert(
      fc.property(arb, ([table, dropColumns]) => {
        const full = serialise(table, "target_col", () => "NA");
        // Either the file holds the target alone, or every other column is ignored.
        const text = dropColumns ? serialise({ ...table, features: [] }, "target_col", () => "NA") : full;
        const ignore = dropColumns ? [] : table.features.map((f) => f.name);
        const outcome = timed(() => parseCsvDataset(text, "lonely.csv", { target: "target_col", ignore }));
        expect(outcome.error).toBeInstanceOf(InputError);
        expect((outcome.error as Error).message).toMatch(/^lonely\.csv:1: no feature columns/);
      }),
      fuzzRuns(8_006, 300),
    );
  });
});

/** sha256 of every file in a folder, by name. */
function folderHashes(dir: string): Record<string, string> {
  const hashes: Record<string, string> = {};
  for (const entry of readdirSync(dir, { recursive: true, withFileTypes: true })) {
    if (!entry.isFile()) continue;
    const path = join(entry.parentPath, entry.name);
    hashes[path.slice(dir.length)] = createHash("sha256").update(readFileSync(path)).digest("hex");
  }
  return hashes;
}

describe("bad input through the real CLI", () => {
  it("generated bad CSVs and plans exit with code 2 and one stderr line", () => {
    const dir = tempDir("fuzz-cli");
    // Inputs the in-process parser refuses; the CLI must refuse them the same way, before any trial.
    const csvs = fc
      .sample(malformedCsv, { seed: 8_007, numRuns: 400 })
      .filter((text) => timed(() => parseCsvDataset(text, "x.csv", { target: "y" })).error instanceof InputError)
      .slice(0, 2);
    expect(csvs).toHaveLength(2);
    const planBody = (train: string) => `name: fuzzcli\ndata: { train: ${train}, target: y, holdout: 0 }\nfolds: { k: 2 }\nbudget: { trials: 1 }\nfamilies:\n  tree: { depth: 2 }\n`;
    const cases: string[] = [];
    csvs.forEach((text, i) => {
      writeFileSync(join(dir, `bad${i}.csv`), text);
      writeFileSync(join(dir, `bad${i}.plan.yaml`), planBody(`bad${i}.csv`));
      cases.push(`bad${i}.plan.yaml`);
    });
    const plans = fc.sample(fc.tuple(pathKey, badValue), { seed: 8_008, numRuns: 50 }).filter(([path]) => path !== "name" && path !== "data.train");
    writeFileSync(join(dir, "ok.csv"), "a,y\n1,p\n2,q\n3,p\n4,q\n");
    for (const [i, [path, value]] of plans.slice(0, 1).entries()) {
      const plan = structuredClone({ ...PLAN_BASE, data: { train: "ok.csv", target: "y", holdout: 0 } }) as Record<string, unknown>;
      setPath(plan, path, structuredClone(value));
      writeFileSync(join(dir, `schema${i}.plan.yaml`), JSON.stringify(plan));
      if (timed(() => parsePlan(JSON.stringify(plan), "p")).error instanceof InputError) cases.push(`schema${i}.plan.yaml`);
    }
    writeFileSync(join(dir, "yaml.plan.yaml"), "name: fuzzcli\ndata: { train: ok.csv\nbudget: [\n");
    cases.push("yaml.plan.yaml");
    expect(cases).toHaveLength(4);
    for (const plan of cases) {
      const r = nightshift(["run", plan, "--run-dir", `run-${plan}`, "--quiet"], dir);
      expect({ plan, code: r.code }).toEqual({ plan, code: 2 });
      expect(r.stderr.trim().split("\n")).toHaveLength(1);
      expect(r.stderr).toContain(plan.endsWith(".csv") ? plan : plan.includes("bad") ? plan.replace(".plan.yaml", ".csv") : plan);
    }
  });

  it("a refused resume leaves the run folder byte for byte as it was", () => {
    const dir = tempDir("fuzz-resume");
    const data = writeSmallTurbines(dir, 30, 10);
    const body = `name: kept\ndata: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id] }\nfolds: { k: 2 }\nbudget: { trials: 1 }\nfamilies:\n  tree: { depth: 2 }\n`;
    writeFileSync(join(dir, "kept.plan.yaml"), body);
    expect(nightshift(["run", "kept.plan.yaml", "--run-dir", "r", "--quiet"], dir).code).toBe(0);
    const before = folderHashes(join(dir, "r"));
    // The plan changed, then the data file changed under an unchanged plan.
    writeFileSync(join(dir, "kept.plan.yaml"), body.replace("depth: 2", "depth: 3"));
    const planChanged = nightshift(["run", "kept.plan.yaml", "--run-dir", "r", "--quiet"], dir);
    writeFileSync(join(dir, "kept.plan.yaml"), body);
    writeFileSync(data, readFileSync(data, "utf8").replace(/\n[^\n]*\n$/, "\n"));
    const dataChanged = nightshift(["run", "kept.plan.yaml", "--run-dir", "r", "--quiet"], dir);
    for (const r of [planChanged, dataChanged]) {
      expect(r.code).toBe(2);
      expect(r.stderr.trim().split("\n")).toHaveLength(1);
    }
    expect(folderHashes(join(dir, "r"))).toEqual(before);
  });
});
