import { readFileSync } from "node:fs";
import { join } from "node:path";
import { buildBoard } from "@nightshift/aggregator";
import { isInputError } from "@nightshift/core";
import { RunStore } from "@nightshift/store";
import { beforeAll, describe, expect, it } from "vitest";
import { reportVerb } from "../../cli/src/verbs/report.js";
import { CAUTIONS, escapeHtml, renderReport } from "../src/report/report-html.js";
import { type RunFixture, runShortSearch } from "./run-fixture.js";

let fixture: RunFixture;
let html: string;

beforeAll(async () => {
  fixture = runShortSearch("report-run");
  const store = RunStore.open(fixture.folder);
  try {
    const [a, b] = buildBoard(store).rows;
    store.putArtifact("stack", "ensemble", { kind: "stacking", mean: 0.37, std: 0.19, nested: { mean: 0.35, std: 0.2 }, members: [{ trial: a.trial, weight: 1.4 }, { trial: b.trial, weight: -0.3 }], curve: [] });
    store.putArtifact("greedy", "ensemble", { kind: "selection", mean: 0.36, std: 0.2, nested: { mean: 0.34, std: 0.21 }, members: [{ trial: a.trial, weight: 0.75 }, { trial: b.trial, weight: 0.25 }], curve: [0.3545, 0.358, 0.36] });
    store.putArtifact("holdout", "holdout", { opened_at: "2026-12-02T07:00:00.000Z", scores: [{ name: "greedy", score: 0.31 }] });
  } finally {
    store.close();
  }
  html = await renderReport(fixture.folder, { now: new Date("2026-12-02T08:00:00Z") });
});

describe("the report", () => {
  it("is one self-contained file: no script, nothing loaded from anywhere", () => {
    expect(html).toMatch(/^<!doctype html>/);
    expect(html).not.toMatch(/<script/i);
    expect(html).not.toMatch(/<link[^>]+href/i);
    expect(html).not.toMatch(/\b(src|href)\s*=\s*["']?(https?:)?\/\//i);
    expect(html).not.toMatch(/url\(\s*["']?(https?:)?\/\//i);
    expect(html).not.toMatch(/@import/i);
    // The page forbids itself every fetch.
    expect(html).toContain(`content="default-src 'none'; style-src 'unsafe-inline'; img-src data:"`);
  });

  it("draws its charts as inline SVG", () => {
    const svgs = html.match(/<svg[\s>]/g) ?? [];
    // Best score so far, hyperparameters of three families, selection curve, two weight charts,
    // fold scores, precision-recall, ROC, calibration, confusion.
    expect(svgs.length).toBeGreaterThanOrEqual(12);
    expect(html).toContain("precision-recall (AP");
    expect(html).toContain("ROC (AUC");
    expect(html).toContain("calibration (ECE");
    expect(html).toContain("confusion at threshold 0.50");
  });

  it("has the board, the ensembles, the hold-out and the cautions", () => {
    const store = RunStore.open(fixture.folder, { readonly: true });
    const board = buildBoard(store);
    store.close();
    expect(html.match(/<tr class="(tie)?"><td class="num">/g)).toHaveLength(board.rows.length);
    expect(html).toContain(`Best trial: <strong>#${board.rows[0].trial} ${board.rows[0].family}</strong>`);
    expect(html).toContain("Best ensemble: <strong>stacking</strong>");
    expect(html).toContain("The hold-out was opened at 2026-12-02T07:00:00.000Z: greedy 0.3100.");
    for (const caution of CAUTIONS) {
      expect(html).toContain(escapeHtml(caution.title));
      expect(html).toContain(escapeHtml(caution.text));
    }
    expect(html).toMatch(/recent data/);
    expect(html).toMatch(/bias across groups/i);
    expect(html).toMatch(/human in the loop/i);
    expect(html).toMatch(/regulation/);
  });

  it("escapes what comes from the store", () => {
    expect(escapeHtml(`<img src=x onerror="a">&'`)).toBe("&lt;img src=x onerror=&quot;a&quot;&gt;&amp;&#39;");
  });
});

describe("nightshift report", () => {
  it("writes report.html into the run folder, or where -o says", async () => {
    expect(await reportVerb.run([fixture.folder])).toBe(0);
    expect(readFileSync(join(fixture.folder, "report.html"), "utf8")).toContain("<svg");
    const out = join(fixture.runsDir, "shared.html");
    expect(await reportVerb.run([fixture.folder, "-o", out])).toBe(0);
    expect(readFileSync(out, "utf8")).toContain("Before you use this model");
  });

  it("refuses a folder that holds no run, as a mistake of the user", async () => {
    await expect(reportVerb.run([fixture.runsDir])).rejects.toSatisfy((error: unknown) => isInputError(error) && /not a run folder/.test((error as Error).message));
  });
});
