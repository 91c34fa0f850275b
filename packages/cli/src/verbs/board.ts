import { buildBoard } from "@nightshift/aggregator";
import { InputError } from "@nightshift/core";
import { RunStore } from "@nightshift/store";
import { parseVerbArgs, positiveInteger } from "../args.js";
import { formatBoard } from "../board-table.js";
import type { Verb } from "../commands.js";

export const boardVerb: Verb = {
  name: "board",
  usage: "board <run-dir> [--json] [--top N]",
  summary: "print a run's leaderboard (also while it runs)",
  async run(args) {
    const { values, positionals } = parseVerbArgs(
      "board",
      args,
      { json: { type: "boolean", default: false }, top: { type: "string" }, family: { type: "string" } },
      { min: 1, max: 1, names: "one run folder: nightshift board <run-dir>" },
    );
    const runDir = positionals[0];
    if (!RunStore.exists(runDir)) throw new InputError(runDir, "not a run folder (no run.sqlite inside)");
    const store = RunStore.open(runDir, { readonly: true });
    try {
      const board = buildBoard(store, { top: positiveInteger("board", "top", values.top), family: values.family });
      console.log(values.json ? JSON.stringify(board, null, 2) : formatBoard(board));
    } finally {
      store.close();
    }
    return 0;
  },
};
