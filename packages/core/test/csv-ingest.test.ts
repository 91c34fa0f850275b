import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { parseCsvDataset, readCsvDataset } from "../src/csv/read-csv.js";
import { SPELLING_MEMORY } from "../src/csv/column-builder.js";
import { holdsHeaderLine, sniffDelimiter, sniffDialect } from "../src/csv/sniff-delimiter.js";
import { trainView, type Dataset } from "../src/dataset/dataset.js";
import type { CategoricalColumn, FeatureColumn, NumericColumn } from "../src/frame.js";
import { MISSING_CODE } from "../src/frame.js";

const scratch = mkdtempSync(join(tmpdir(), "nightshift-csv-"));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

function column(dataset: Dataset, name: string): FeatureColumn {
  const found = dataset.features.find((c) => c.name === name);
  if (found === undefined) throw new Error(`no feature ${name}`);
  return found;
}
const numeric = (dataset: Dataset, name: string): number[] => Array.from((column(dataset, name) as NumericColumn).values);
function categories(dataset: Dataset, name: string): (string | null)[] {
  const c = column(dataset, name) as CategoricalColumn;
  expect(c.kind).toBe("categorical");
  return Array.from(c.codes, (code) => (code === MISSING_CODE ? null : c.vocabulary[code]));
}
function labels(dataset: Dataset): string[] {
  if (dataset.target.kind !== "classes") throw new Error("not classes");
  const target = dataset.target;
  return Array.from(target.codes, (code) => target.labels[code]);
}

describe("delimiter detection", () => {
  it("reads ; and tab separated files like comma separated ones", () => {
    const comma = parseCsvDataset("x,c,y\n1.5,a,0\n2,b,1\n", "comma.csv", { target: "y" });
    const semicolon = parseCsvDataset("x;c;y\n1.5;a;0\n2;b;1\n", "semi.csv", { target: "y" });
    const tab = parseCsvDataset("x\tc\ty\n1.5\ta\t0\n2\tb\t1\n", "tab.tsv", { target: "y" });
    for (const dataset of [semicolon, tab]) {
      expect(numeric(dataset, "x")).toEqual(numeric(comma, "x"));
      expect(categories(dataset, "c")).toEqual(["a", "b"]);
      expect(dataset.fingerprint).toBe(comma.fingerprint);
    }
  });

  it("goes by the header, so decimal commas in a ; file do not fool it", () => {
    expect(sniffDelimiter("price;weight;label\n1,5;2,25;a\n")).toBe(";");
    const dataset = parseCsvDataset("price;label\n1,5;a\n2,5;b\n", "eu.csv", { target: "label" });
    // A decimal comma is not a number here: the column is text, as the user can see.
    expect(categories(dataset, "price")).toEqual(["1,5", "2,5"]);
  });

  it("ignores delimiters inside quoted header names and reads one-column files", () => {
    expect(sniffDelimiter('"a;b"\t"c;d"\t"e"\n')).toBe("\t");
    expect(sniffDelimiter("only\n1\n")).toBe(",");
  });
});

describe("CSV dialect", () => {
  it("keeps delimiters, quotes and line breaks inside quoted fields", () => {
    const text = 'note,x,y\n"red, blue",1,0\n"say ""hi""",2,1\n"two\nlines",3,0\n';
    const dataset = parseCsvDataset(text, "quoted.csv", { target: "y" });
    expect(categories(dataset, "note")).toEqual(["red, blue", 'say "hi"', "two\nlines"]);
    expect(numeric(dataset, "x")).toEqual([1, 2, 3]);
  });

  it("drops a UTF-8 byte-order mark from the first column name", () => {
    const dataset = parseCsvDataset("\ufeffx,y\n1,0\n2,1\n", "bom.csv", { target: "y" });
    expect(dataset.features[0].name).toBe("x");
  });

  it("reads CRLF line ends and skips blank lines", () => {
    const lf = parseCsvDataset("x,y\n1,0\n2,1\n", "lf.csv", { target: "y" });
    const crlf = parseCsvDataset("x,y\r\n1,0\r\n\r\n2,1\r\n", "crlf.csv", { target: "y" });
    expect(numeric(crlf, "x")).toEqual([1, 2]);
    expect(crlf.fingerprint).toBe(lf.fingerprint);
  });

  it("reads a quote inside an unquoted field as text, and drops spaces after a closing quote", () => {
    // Heights in feet and inches are a common sight: 5'11" is text, not the start of a quoted field.
    const dataset = parseCsvDataset('height,note,y\n5\'11","a, b"  ,0\n6\'2",c,1\n', "lenient.csv", { target: "y" });
    expect(categories(dataset, "height")).toEqual(["5'11\"", "6'2\""]);
    expect(categories(dataset, "note")).toEqual(["a, b", "c"]);
  });

  it("takes the line end from the header line, so CR-only files read like LF ones", async () => {
    expect(sniffDialect("a;b\r\n1;2\r\n")).toEqual({ delimiter: ";", lineEnd: "\r\n" });
    expect(sniffDialect('"x\ny",b\r1,2\r')).toEqual({ delimiter: ",", lineEnd: "\r" });
    expect(sniffDialect("only")).toEqual({ delimiter: ",", lineEnd: "\n" });
    // A CR at the end of what was read may be half of a CRLF: the header line is not complete yet.
    expect(holdsHeaderLine("a,b\r")).toBe(false);
    expect(holdsHeaderLine("a,b\r\n")).toBe(true);
    const lf = parseCsvDataset("x,y\n1,0\n2,1\n", "lf.csv", { target: "y" });
    const text = "x,y\r1,0\r\r2,1\r";
    const path = join(scratch, "cr.csv");
    writeFileSync(path, text);
    expect(parseCsvDataset(text, path, { target: "y" }).fingerprint).toBe(lf.fingerprint);
    expect((await readCsvDataset(path, { target: "y" })).fingerprint).toBe(lf.fingerprint);
  });

  it("names unnamed header columns by position", () => {
    const dataset = parseCsvDataset(",x,y\n0,1,0\n1,2,1\n", "index.csv", { target: "y" });
    expect(dataset.features.map((c) => c.name)).toEqual(["column_1", "x"]);
  });
});

describe("type inference", () => {
  it("reads every missing spelling as missing, in any letter case", () => {
    const text = "x,c,y\n1,a,0\n,,1\nNA,na,0\nnan,NaN,1\nNULL,null,0\n?,?,1\n  ,  ,0\n2,b,1\n";
    const dataset = parseCsvDataset(text, "missing.csv", { target: "y" });
    const x = numeric(dataset, "x");
    expect(x[0]).toBe(1);
    expect(x.slice(1, 7).every(Number.isNaN)).toBe(true);
    expect(x[7]).toBe(2);
    expect(column(dataset, "x").kind).toBe("numeric");
    expect(categories(dataset, "c")).toEqual(["a", null, null, null, null, null, null, "b"]);
  });

  it("treats true/false and yes/no as booleans in any case, and 0/1 as numbers", () => {
    const text = "t,yn,bits,y\nTrue,yes,0,0\nfalse,NO,1,1\n,Yes,1,0\nTRUE,no,,1\n";
    const dataset = parseCsvDataset(text, "bools.csv", { target: "y" });
    expect(column(dataset, "t").kind).toBe("boolean");
    expect(numeric(dataset, "t")).toEqual([1, 0, NaN, 1]);
    expect(column(dataset, "yn").kind).toBe("boolean");
    expect(numeric(dataset, "yn")).toEqual([1, 0, 1, 0]);
    expect(column(dataset, "bits").kind).toBe("numeric");
  });

  it("makes a column categorical at its first word, keeping earlier numbers as their spelling", () => {
    const text = "code,y\n1,0\n2.50,1\n,0\n1.0,1\nx9,0\n2.50,1\n";
    const dataset = parseCsvDataset(text, "mixed.csv", { target: "y" });
    // "1" and "1.0" are one number, so one category named by its first spelling.
    expect(categories(dataset, "code")).toEqual(["1", "2.50", null, "1", "x9", "2.50"]);
  });

  it("re-reads a column that turns categorical after more distinct numbers than it remembers", () => {
    const lines = ["value,y"];
    for (let i = 0; i < SPELLING_MEMORY + 50; i++) lines.push(`${i}.25,${i % 2}`);
    lines.push("unknown,1");
    const dataset = parseCsvDataset(lines.join("\n"), "late.csv", { target: "y" });
    const values = categories(dataset, "value");
    expect(values.length).toBe(SPELLING_MEMORY + 51);
    expect(values[0]).toBe("0.25");
    expect(values[SPELLING_MEMORY + 10]).toBe(`${SPELLING_MEMORY + 10}.25`);
    expect(values[SPELLING_MEMORY + 50]).toBe("unknown");
  });

  it("reads listed columns as categories even when they hold numbers", () => {
    const dataset = parseCsvDataset("zip,x,y\n10115,1,0\n80331,2,1\n10115,3,0\n", "zip.csv", { target: "y", categorical: ["zip"] });
    expect(categories(dataset, "zip")).toEqual(["10115", "80331", "10115"]);
    expect(column(dataset, "x").kind).toBe("numeric");
  });

  it("reads numbers with surrounding spaces, and numbers listed as missing spellings as missing", () => {
    const dataset = parseCsvDataset("x,z,y\n 7 ,-999,0\n8,  3.5,1\n9 ,-999 ,0\n", "spaces.csv", { target: "y", missing: ["-999"] });
    expect(numeric(dataset, "x")).toEqual([7, 8, 9]);
    expect(numeric(dataset, "z")).toEqual([NaN, 3.5, NaN]);
  });

  it("leaves out ignored columns and reads extra missing spellings", () => {
    const dataset = parseCsvDataset("id,sex,y\n1,M,0\n2,.,1\n3,F,0\n", "extra.csv", { target: "y", ignore: ["id"], missing: ["."] });
    expect(dataset.features.map((c) => c.name)).toEqual(["sex"]);
    expect(categories(dataset, "sex")).toEqual(["M", null, "F"]);
  });
});

describe("target and task", () => {
  it("infers binary and multiclass tasks and sorts labels as strings or numbers", () => {
    const binary = parseCsvDataset("x,y\n1,yes\n2,no\n3,yes\n", "b.csv", { target: "y" });
    expect(binary.task).toBe("binary");
    expect(binary.target.kind === "classes" && binary.target.labels).toEqual(["no", "yes"]);
    expect(labels(binary)).toEqual(["yes", "no", "yes"]);

    const multi = parseCsvDataset("x,y\n1,10\n2,9\n3,2\n4,10\n", "m.csv", { target: "y" });
    expect(multi.task).toBe("multiclass");
    expect(multi.target.kind === "classes" && multi.target.labels).toEqual(["2", "9", "10"]);
    expect(labels(multi)).toEqual(["10", "9", "2", "10"]);

    const forced = parseCsvDataset("x,y\n1,10\n2,9\n3,2\n", "f.csv", { target: "y", categorical: ["y"] });
    expect(forced.target.kind === "classes" && forced.target.labels).toEqual(["2", "9", "10"]);
  });

  it("infers regression from non-integers or more than 20 distinct integers", () => {
    const fractional = parseCsvDataset("x,y\n1,0.5\n2,1\n3,0.5\n", "r.csv", { target: "y" });
    expect(fractional.task).toBe("regression");
    expect(fractional.target.kind === "values" && Array.from(fractional.target.values)).toEqual([0.5, 1, 0.5]);
    const rows = Array.from({ length: 21 }, (_, i) => `${i},${i * 3}`);
    expect(parseCsvDataset(`x,y\n${rows.join("\n")}\n`, "r21.csv", { target: "y" }).task).toBe("regression");
    const twenty = Array.from({ length: 40 }, (_, i) => `${i},${i % 20}`);
    expect(parseCsvDataset(`x,y\n${twenty.join("\n")}\n`, "c20.csv", { target: "y" }).task).toBe("multiclass");
  });

  it("keeps the target in float64 and follows a task given by the user", () => {
    const dataset = parseCsvDataset("x,y\n1,0.1\n2,3\n", "p.csv", { target: "y", task: "regression" });
    expect(dataset.target.kind === "values" && dataset.target.values[0]).toBe(0.1);
    const integers = parseCsvDataset("x,y\n1,1\n2,2\n3,3\n", "i.csv", { target: "y", task: "regression" });
    expect(integers.task).toBe("regression");
  });

  it("drops rows whose target is missing and reports how many", () => {
    const dataset = parseCsvDataset("x,c,y\n1,a,0\n2,b,\n3,c,NA\n4,a,1\n", "drop.csv", { target: "y" });
    expect(dataset.rowCount).toBe(2);
    expect(dataset.droppedRows).toBe(2);
    expect(numeric(dataset, "x")).toEqual([1, 4]);
    // Categories seen only in dropped rows are gone.
    expect((column(dataset, "c") as CategoricalColumn).vocabulary).toEqual(["a"]);
  });

  it("gives learners a view of chosen rows with the target and task, sharing the columns", () => {
    const dataset = parseCsvDataset("x,y\n1,a\n2,b\n3,a\n", "view.csv", { target: "y" });
    const view = trainView(dataset, Uint32Array.of(0, 2));
    expect(view.task).toBe("binary");
    expect(view.target).toBe(dataset.target);
    expect(view.columns[0]).toBe(dataset.features[0]);
    expect(Array.from(view.rows)).toEqual([0, 2]);
  });

  it("keeps the group column aside as group ids", () => {
    const dataset = parseCsvDataset("site,x,y\nB,1,0\nA,2,1\nB,3,0\n", "g.csv", { target: "y", group: "site" });
    expect(dataset.features.map((c) => c.name)).toEqual(["x"]);
    expect(Array.from(dataset.groups!)).toEqual([0, 1, 0]);
    expect(dataset.groupColumn).toBe("site");
  });
});

describe("reading a file", () => {
  it("streams a file to the same dataset as parsing its text", async () => {
    const lines = ["id;x;colour;flag;y"];
    for (let i = 0; i < 5000; i++) lines.push(`${i};${(i * 0.37).toFixed(3)};${["red", "green", "blue"][i % 3]};${i % 4 === 0 ? "yes" : "no"};${i % 3}`);
    const text = `\ufeff${lines.join("\r\n")}\r\n`;
    const path = join(scratch, "stream.csv");
    writeFileSync(path, text);
    const streamed = await readCsvDataset(path, { target: "y", ignore: ["id"] });
    const parsed = parseCsvDataset(text, path, { target: "y", ignore: ["id"] });
    expect(streamed.rowCount).toBe(5000);
    expect(streamed.task).toBe("multiclass");
    expect(streamed.fingerprint).toBe(parsed.fingerprint);
    expect(numeric(streamed, "x")[4999]).toBeCloseTo(4999 * 0.37, 3);
    expect(column(streamed, "flag").kind).toBe("boolean");
  });

  it("drops a byte-order mark before a quoted first column name", async () => {
    const text = '\ufeff"size, cm";y\n1,5;a\n2;b\n';
    const path = join(scratch, "bom-quoted.csv");
    writeFileSync(path, text);
    for (const dataset of [await readCsvDataset(path, { target: "y" }), parseCsvDataset(text, path, { target: "y" })]) {
      expect(dataset.features.map((c) => c.name)).toEqual(["size, cm"]);
    }
  });

  it("keeps a character whole when a read ends inside its UTF-8 bytes", async () => {
    // The file is read 1 MB (2^20 bytes) at a time; the 3-byte "€" starts one byte before that.
    const header = "name,y\n";
    const first = `${"a".repeat(2 ** 20 - 1 - header.length)}€uro`;
    const lines = [header + first + ",0"];
    for (let i = 0; i < 2000; i++) lines.push(`€${i % 3},${i % 2}`);
    const text = `${lines.join("\n")}\n`;
    const path = join(scratch, "euro.csv");
    writeFileSync(path, text);
    const streamed = await readCsvDataset(path, { target: "y" });
    expect(categories(streamed, "name")[0]).toBe(first);
    expect((column(streamed, "name") as CategoricalColumn).vocabulary.slice(1)).toEqual(["€0", "€1", "€2"]);
    expect(streamed.fingerprint).toBe(parseCsvDataset(text, path, { target: "y" }).fingerprint);
  });

  it("reads every row when the first lines make it expect far fewer", async () => {
    // Long lines first: the row estimate from the first 64 KB is about a tenth of the rows.
    const lines = ["note,x,y"];
    for (let i = 0; i < 400; i++) lines.push(`${"long text ".repeat(20)},${i},${i % 2}`);
    for (let i = 400; i < 30000; i++) lines.push(`s,${i},${i % 2}`);
    const path = join(scratch, "uneven.csv");
    writeFileSync(path, lines.join("\n"));
    const dataset = await readCsvDataset(path, { target: "y" });
    expect(dataset.rowCount).toBe(30000);
    const x = numeric(dataset, "x");
    expect(x.every((value, i) => value === i)).toBe(true);
  });

  it("re-reads a file for a late categorical column", async () => {
    const lines = ["value,y"];
    for (let i = 0; i < SPELLING_MEMORY + 5; i++) lines.push(`${i / 8},${i % 2}`);
    lines.push("n/a,1");
    const path = join(scratch, "late.csv");
    writeFileSync(path, lines.join("\n"));
    const dataset = await readCsvDataset(path, { target: "y" });
    const values = categories(dataset, "value");
    expect(values[3]).toBe("0.375");
    expect(values.at(-1)).toBe("n/a");
  });
});
