import { writeFileSync } from "node:fs";
import { join } from "node:path";
import { InputError } from "@nightshift/core";
import { renderReport } from "@nightshift/server";
import { RunStore } from "@nightshift/store";
import { parseVerbArgs, positiveInteger } from "../args.js";
import type { Verb } from "../commands.js";

export const reportVerb: Verb = {
  name: "report",
  usage: "report <run-dir> [-o report.html] [--top N]",
  summary: "write one self-contained HTML report of a run (board, curves, ensembles, hold-out, cautions)",
  async run(args) {
    const { values, positionals } = parseVerbArgs(
      "report",
      args,
      { output: { type: "string", short: "o" }, top: { type: "string" } },
      { min: 1, max: 1, names: "one run folder: nightshift report <run-dir>" },
    );
    const runDir = positionals[0];
    if (!RunStore.exists(runDir)) throw new InputError(runDir, "not a run folder (no run.sqlite inside)");
    const output = values.output ?? join(runDir, "report.html");
    const html = await renderReport(runDir, { top: positiveInteger("report", "top", values.top) });
    writeFileSync(output, html);
    console.error(`nightshift: wrote ${output}`);
    return 0;
  },
};
