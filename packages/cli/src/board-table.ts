import type { Board } from "@nightshift/aggregator";

function fmt(value: number | null | undefined, digits = 4): string {
  return value === null || value === undefined ? "-" : value.toFixed(digits);
}

function paramsText(params: Record<string, unknown>): string {
  return Object.entries(params)
    .map(([k, v]) => `${k}=${typeof v === "number" && !Number.isInteger(v) ? Number(v.toPrecision(3)) : String(v)}`)
    .join(" ");
}

function membersText(members: ReadonlyArray<{ trial: number; weight: number }>, kind: string): string {
  const shown = [...members].sort((a, b) => Math.abs(b.weight) - Math.abs(a.weight) || a.trial - b.trial).slice(0, 6);
  const label = kind === "stacking" ? "coefficients" : "weights";
  return `${members.length} members, ${label}: ${shown.map((m) => `t${m.trial} ${m.weight.toFixed(3)}`).join(", ")}${members.length > shown.length ? ", …" : ""}`;
}

/** The board as an aligned terminal table. `≈` marks trials statistically tied with the best. */
export function formatBoard(board: Board, width = 140): string {
  const header = ["rank", "trial", "family", board.metric, "± std", "folds", "fit s", "status", "", "parameters"];
  const rows = board.rows.map((r) => [
    String(r.rank),
    String(r.trial),
    r.family,
    fmt(r.mean),
    fmt(r.std),
    String(r.folds.filter((s) => s !== null).length),
    fmt(r.fit_s, 2),
    r.status,
    r.tie_with_best ? "≈" : "",
    r.status === "failed" || r.status === "timed_out" ? (r.message ?? "") : paramsText(r.params),
  ]);
  const widths = header.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const numeric = new Set([0, 1, 3, 4, 5, 6]);
  const line = (cells: string[]): string => {
    const text = cells.map((c, i) => (i === cells.length - 1 ? c : numeric.has(i) ? c.padStart(widths[i]) : c.padEnd(widths[i]))).join("  ");
    return text.length > width ? `${text.slice(0, width - 1)}…` : text;
  };
  const out = [`run ${board.run}: ${board.metric} (${board.direction === "max" ? "higher" : "lower"} is better)`, line(header), ...rows.map(line)];
  if (board.rows.some((r) => r.tie_with_best))
    out.push("≈ not significantly different from the best (corrected resampled t-test, Nadeau & Bengio 2003, α = 0.05): fold noise, not a real difference.");
  if (board.ensembles.length > 0) {
    out.push("", `ensembles (${board.metric}; "out-of-fold" is optimistic: the weights were fitted on those rows; "nested" is the honest estimate):`);
    for (const e of board.ensembles) {
      const tie = e.nested.tie_with_best === undefined ? "" : e.nested.tie_with_best ? "  ≈ best trial" : "  differs from best trial";
      out.push(
        `  ${e.final ? "*" : " "} ${e.kind.padEnd(9)}  out-of-fold ${fmt(e.mean)} ± ${fmt(e.std)}   nested ${fmt(e.nested.mean)} ± ${fmt(e.nested.std)}${tie}   ${membersText(e.members, e.kind)}`,
      );
      const curve = e.curve.filter((v): v is number => v !== null);
      if (curve.length > 1) out.push(`      hillclimb curve over ${curve.length} rounds (score of all out-of-fold rows pooled, not a mean over folds): ${fmt(curve[0])} → best ${fmt(board.direction === "max" ? Math.max(...curve) : Math.min(...curve))} → last ${fmt(curve[curve.length - 1])}`);
      if (e.note) out.push(`      note: ${e.note}`);
    }
    if (board.ensembles.some((e) => e.final)) out.push("  * exported to ensemble.json (chosen by the nested estimate, before the hold-out was opened)");
  }
  if (board.holdout) {
    out.push("", `hold-out (${board.holdout.rows ?? "?"} sealed rows, opened once at ${board.holdout.opened_at}; reported, never used to choose):`);
    for (const s of board.holdout.scores) out.push(`  ${s.name === board.holdout.final ? "*" : " "} ${s.name.padEnd(22)} ${fmt(s.score)}`);
  }
  if (board.importance && board.importance.features.length > 0) {
    const top = board.importance.features.slice(0, 5);
    out.push(
      "",
      `permutation importance of the exported predictor on the hold-out (drop in ${board.importance.metric}, mean ± std over ${board.importance.repeats} shuffles):`,
      `  ${top.map((f) => `${f.name} ${fmt(f.mean)} ± ${fmt(f.std)}`).join("; ")}`,
    );
  }
  return out.join("\n");
}
