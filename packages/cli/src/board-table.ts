import type { Board } from "@nightshift/aggregator";

function fmt(value: number | null | undefined, digits = 4): string {
  return value === null || value === undefined ? "-" : value.toFixed(digits);
}

function paramsText(params: Record<string, unknown>): string {
  return Object.entries(params)
    .map(([k, v]) => `${k}=${typeof v === "number" && !Number.isInteger(v) ? Number(v.toPrecision(3)) : String(v)}`)
    .join(" ");
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
  for (const e of board.ensembles)
    out.push(`ensemble ${e.kind}: ${fmt(e.mean)} ± ${fmt(e.std)} on out-of-fold rows (optimistic); nested estimate ${fmt(e.nested.mean)} ± ${fmt(e.nested.std)}; ${e.members.length} members`);
  if (board.holdout) {
    out.push(`hold-out opened ${board.holdout.opened_at}:`);
    for (const s of board.holdout.scores) out.push(`  ${s.name}: ${fmt(s.score)}`);
  }
  return out.join("\n");
}
