import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { MAX_RECORD_CHARS } from "../src/csv/csv-records.js";
import { parseCsvDataset, readCsvDataset, type IngestOptions } from "../src/csv/read-csv.js";
import { InputError } from "../src/errors.js";
import { planFolds } from "../src/splits/plan-folds.js";
import { allRows } from "../src/frame.js";

const scratch = mkdtempSync(join(tmpdir(), "nightshift-bad-"));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

/** The single InputError that reading `text` (as a file, streamed) gives. */
async function fileError(text: string, options: IngestOptions, name = "data.csv"): Promise<InputError> {
  const path = join(scratch, name);
  writeFileSync(path, text);
  const error = await readCsvDataset(path, options).then(
    () => null,
    (e: unknown) => e,
  );
  expect(error).toBeInstanceOf(InputError);
  // The text path must fail the same way.
  expect(() => parseCsvDataset(text, path, options)).toThrow((error as InputError).message);
  return error as InputError;
}

describe("bad CSV input gives one InputError naming file and line", () => {
  it("ragged rows", async () => {
    const error = await fileError("a,b,y\n1,2,0\n3,4,1\n5,6\n", { target: "y" });
    expect(error.message).toMatch(/data\.csv:4: this row has 2 fields but the header has 3/);
  });

  it("a file with no feature column besides the target", async () => {
    expect((await fileError("y\n0\n1\n", { target: "y" })).message).toMatch(/data\.csv:1: no feature columns are left besides the target/);
    expect((await fileError("id,y\n1,0\n2,1\n", { target: "y", ignore: ["id"] })).message).toMatch(/data\.csv:1: no feature columns/);
  });

  it("an unterminated quote", async () => {
    const error = await fileError('a,b,y\n1,2,0\n3,"4,1\n5,6,0\n', { target: "y" });
    expect(error.message).toMatch(/data\.csv:3: a quoted field that starts on this line or later is never closed/);
  });

  it("text after a closing quote", async () => {
    const error = await fileError('a,y\n"x"y,0\n', { target: "y" });
    expect(error.message).toMatch(/data\.csv:2: a closing quote is followed by more text/);
  });

  it("an empty file", async () => {
    const error = await fileError("", { target: "y" }, "empty.csv");
    expect(error.message).toMatch(/empty\.csv: the file is empty/);
  });

  it("a header with no rows", async () => {
    const error = await fileError("a,b,y\n", { target: "y" });
    expect(error.message).toMatch(/data\.csv:1: the file has a header but no data rows/);
  });

  it("duplicate column names", async () => {
    const error = await fileError("a,b,a,y\n1,2,3,0\n", { target: "y" });
    expect(error.message).toMatch(/data\.csv:1: duplicate column name "a" \(columns 1 and 3\)/);
  });

  it("a target column that is not in the file, listing the columns", async () => {
    const error = await fileError("a,b,label\n1,2,0\n", { target: "y" });
    expect(error.message).toMatch(/data\.csv:1: the target is "y", which is not a column of the file; the columns are "a", "b", "label"/);
  });

  it("a target with a single class", async () => {
    const error = await fileError("a,y\n1,yes\n2,yes\n3,\n", { target: "y" });
    expect(error.message).toMatch(/data\.csv: column "y": the target has a single class \("yes"\)/);
  });

  it("a target with every value missing", async () => {
    const error = await fileError("a,y\n1,\n2,NA\n", { target: "y" });
    expect(error.message).toMatch(/data\.csv: column "y": all 2 values of the target are missing/);
  });

  it("a non-numeric value in a regression target, with its line and value", async () => {
    const error = await fileError("a,y\n1,0.5\n2,1.5\n3,n/a\n4,2.5\n", { target: "y", task: "regression" });
    expect(error.message).toMatch(/data\.csv:4: column "y": the target of a regression must be numeric, found "n\/a"/);
  });

  it("the line of a bad value after records that span several lines", async () => {
    const rows = ["note,y"];
    for (let i = 0; i < 3000; i++) rows.push(i % 3 === 0 ? `"two\nlines",${i}.5` : `one,${i}.5`);
    rows.push("last,oops");
    // 1 header line, 1000 records of two lines, 2000 of one line: the bad record is on line 4002.
    const error = await fileError(`${rows.join("\n")}\n`, { target: "y", task: "regression" }, "multiline.csv");
    expect(error.message).toMatch(/multiline\.csv:4002: column "y": the target of a regression must be numeric, found "oops"/);
  });

  it("a group column with a single group", async () => {
    const error = await fileError("site,a,y\nX,1,0\nX,2,1\n", { target: "y", group: "site" });
    expect(error.message).toMatch(/data\.csv: column "site": the group column has a single group \("X"\)/);
  });

  it("ignore naming an unknown column", async () => {
    const error = await fileError("a,b,y\n1,2,0\n", { target: "y", ignore: ["b", "id"] });
    expect(error.message).toMatch(/data\.csv:1: ignore names "id", which is not a column of the file/);
  });

  it("a binary task with three classes", async () => {
    const error = await fileError("a,y\n1,x\n2,y\n3,z\n", { target: "y", task: "binary" });
    expect(error.message).toMatch(/data\.csv: column "y": the task is binary but the target has 3 classes/);
  });

  it("the line of a bad value after CRLF line ends inside quoted fields, each counted once", async () => {
    const error = await fileError('note,y\r\n"two\r\nlines",0.5\r\n"x",1.5\r\ny,oops\r\n', { target: "y", task: "regression" });
    expect(error.message).toMatch(/data\.csv:5: column "y": the target of a regression must be numeric, found "oops"/);
  });

  it("the line of a ragged row after blank lines, which are skipped but counted", async () => {
    const error = await fileError("\na,y\n1,0\n\n\n2,1\n3\n", { target: "y" });
    expect(error.message).toMatch(/data\.csv:7: this row has 1 fields but the header has 2/);
  });

  it("a line of spaces or a quoted empty field is a row, not a blank line", async () => {
    expect((await fileError("a,y\n1,0\n  \n2,1\n", { target: "y" })).message).toMatch(/data\.csv:3: this row has 1 fields but the header has 2/);
    expect((await fileError('a,y\n1,0\n""\n2,1\n', { target: "y" })).message).toMatch(/data\.csv:3: this row has 1 fields but the header has 2/);
  });

  it("an unterminated quote names the line where the quote opens, after multi-line records", async () => {
    const error = await fileError('note,y\n"a\nb",0\nc,1\nd,"1\ne,0\nf,1\n', { target: "y" });
    expect(error.message).toMatch(/data\.csv:5: a quoted field that starts on this line or later is never closed \(the file ends at line 7 inside quotes\)/);
  });

  it("text after a closing quote names the line where that quoted field opens", async () => {
    const error = await fileError('note,y\n"a\nb",0\nc,1\n"d\ne"f,0\ng,1\n', { target: "y" });
    expect(error.message).toMatch(/data\.csv:5: a closing quote is followed by more text/);
  });

  it("the line of a bad value in a file of several reads, with multi-line fields across read boundaries", async () => {
    // About 3 MB: the file is read in 1 MB pieces, so records straddle pieces.
    const rows = ["note,x,y"];
    let line = 1;
    for (let i = 0; i < 40000; i++) {
      const multiline = i % 7 === 0;
      rows.push(multiline ? `"row ${i}\r\n${"continued, ".repeat(i % 5)}""quoted""",${i},${i % 2}` : `row ${i} ${"word ".repeat(i % 9)},${i},${i % 2}`);
      line += multiline ? 2 : 1;
    }
    rows.push("last,7");
    line += 1;
    const error = await fileError(`${rows.join("\r\n")}\r\n`, { target: "y" }, "large.csv");
    expect(error.message).toMatch(new RegExp(`large\\.csv:${line}: this row has 2 fields but the header has 3`));
  });

  it("a quote left open in a large file stops the reading at a record of MAX_RECORD_CHARS", async () => {
    const path = join(scratch, "runaway.csv");
    const row = "1.5,2.5,0\n";
    writeFileSync(path, `a,b,y\n1,2,0\n3,"4,1\n${row.repeat(Math.ceil(MAX_RECORD_CHARS / row.length) + 1000)}`);
    const error = await readCsvDataset(path, { target: "y" }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(InputError);
    expect((error as InputError).message).toMatch(
      new RegExp(`runaway\\.csv:3: a quoted field that starts on this line or later is not closed within ${MAX_RECORD_CHARS / 2 ** 20} M characters`),
    );
  });

  it("a file that does not exist", async () => {
    const error = await readCsvDataset(join(scratch, "absent.csv"), { target: "y" }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(InputError);
    expect((error as InputError).message).toMatch(/absent\.csv: cannot read the file \(no such file\)/);
  });
});

describe("bad fold settings", () => {
  it("k larger than the smallest class names the class and its count", () => {
    const rows = ["x,species"];
    for (const [species, count] of [["Adelie", 12], ["Chinstrap", 4], ["Gentoo", 3]] as const) {
      for (let i = 0; i < count; i++) rows.push(`${i},${species}`);
    }
    const dataset = parseCsvDataset(rows.join("\n"), "penguins.csv", { target: "species" });
    expect(() => planFolds(dataset, allRows(dataset.rowCount), { k: 5, repeats: 1, stratify: true }, 1)).toThrow(
      /penguins\.csv: folds\.k: k = 5 is more than the 3 rows of class "Gentoo" in column "species"/,
    );
    expect(planFolds(dataset, allRows(dataset.rowCount), { k: 3, repeats: 1, stratify: true }, 1)).toHaveLength(3);
  });
});
