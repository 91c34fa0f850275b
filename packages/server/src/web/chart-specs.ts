import type { TopLevelSpec } from "vega-lite";
import type { BoardRow, EnsembleSummary } from "@nightshift/aggregator";
import type { TimelinePoint, TrialDetail, TrialDiagnostics } from "../schemas.js";

/*
 * Vega-Lite specifications of every chart, as pure functions of API data. The dashboard
 * (in the browser) and the report (rendered to SVG on the server) draw from the same
 * functions, so a chart looks the same in both. This module imports nothing at run time.
 */

export const FAMILY_COLORS: Readonly<Record<string, string>> = {
  logistic: "#4c78a8",
  linear: "#4c78a8",
  tree: "#f58518",
  forest: "#54a24b",
  extra_trees: "#88d27a",
  boosted: "#e45756",
  knn: "#b279a2",
};
const ACCENT = "#2f5d8a";
const MUTED = "#9aa4b1";

const CONFIG = {
  font: "system-ui, -apple-system, 'Segoe UI', Roboto, sans-serif",
  view: { stroke: null },
  axis: { labelColor: "#44505c", titleColor: "#2a333c", gridColor: "#e8ecf0", domainColor: "#c5ccd3", tickColor: "#c5ccd3", titleFontWeight: 600 as const, labelFontSize: 11, titleFontSize: 12 },
  legend: { labelColor: "#44505c", titleColor: "#2a333c", labelFontSize: 11, titleFontSize: 12 },
  title: { color: "#1d252c", fontSize: 13, fontWeight: 600 as const, anchor: "start" as const },
};

export interface ChartSize {
  /** Pixels, or "container" to follow the width of the element the chart is drawn in (browser only). */
  readonly width: number | "container";
  readonly height: number;
}

const DEFAULT_SIZE: ChartSize = { width: 360, height: 240 };

function familyScale(families: readonly string[]): { domain: string[]; range: string[] } {
  const domain = [...new Set(families)].sort();
  return { domain, range: domain.map((f, i) => FAMILY_COLORS[f] ?? ["#72b7b2", "#eeca3b", "#ff9da6", "#9d755d"][i % 4]) };
}

/** Every finished trial's score against the time it finished, with the best score so far as a step line. */
export function bestSoFarSpec(timeline: readonly TimelinePoint[], metric: string, direction: "max" | "min", size: ChartSize = DEFAULT_SIZE): TopLevelSpec {
  let best: number | null = null;
  const values = timeline
    .filter((p) => p.score !== null)
    .map((p) => {
      const score = p.score as number;
      if (best === null || (direction === "max" ? score > best : score < best)) best = score;
      return { at: p.at, trial: p.trial, family: p.family, score, best };
    });
  const times = values.map((v) => Date.parse(v.at)).filter(Number.isFinite);
  const span = times.length > 1 ? Math.max(...times) - Math.min(...times) : 0;
  // Clock time to the minute over a night, to the second over a short run.
  const format = span > 20 * 60_000 ? "%H:%M" : "%H:%M:%S";
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    config: CONFIG,
    width: size.width,
    height: size.height,
    data: { values },
    layer: [
      {
        mark: { type: "point", filled: true, size: 28, opacity: 0.55 },
        encoding: {
          x: { field: "at", type: "temporal", title: "finished at", axis: { format, labelOverlap: true, tickCount: 6 } },
          y: { field: "score", type: "quantitative", title: metric, scale: { zero: false } },
          color: { field: "family", type: "nominal", title: "family", scale: familyScale(values.map((v) => v.family)) },
          tooltip: [
            { field: "trial", type: "quantitative" },
            { field: "family", type: "nominal" },
            { field: "score", type: "quantitative", format: ".4f" },
          ],
        },
      },
      {
        mark: { type: "line", interpolate: "step-after", color: ACCENT, strokeWidth: 2 },
        encoding: {
          x: { field: "at", type: "temporal" },
          y: { field: "best", type: "quantitative" },
        },
      },
    ],
  };
}

function isNumeric(values: readonly unknown[]): boolean {
  return values.length > 0 && values.every((v) => typeof v === "number" && Number.isFinite(v));
}

/** Hyperparameters of one family that were searched (took more than one value) among `rows`. */
export function searchedParams(rows: readonly Pick<BoardRow, "params">[]): string[] {
  const seen = new Map<string, Set<string>>();
  for (const row of rows) {
    for (const [name, value] of Object.entries(row.params)) {
      const set = seen.get(name) ?? new Set<string>();
      set.add(JSON.stringify(value));
      seen.set(name, set);
    }
  }
  return [...seen.entries()].filter(([, set]) => set.size > 1).map(([name]) => name).sort();
}

/**
 * One small chart per searched hyperparameter of one family: each scored trial's mean score
 * against the parameter's value (log axis when a positive range spans two decades or more),
 * trials tied with the best drawn filled.
 */
export function paramsSpec(rows: readonly BoardRow[], family: string, metric: string, size: ChartSize = { width: 220, height: 160 }): TopLevelSpec {
  const scored = rows.filter((r) => r.family === family && r.mean !== null);
  const params = searchedParams(scored);
  const color = FAMILY_COLORS[family] ?? ACCENT;
  const charts = params.map((name) => {
    const raw = scored.map((r) => r.params[name]);
    const numeric = isNumeric(raw);
    const numbers = numeric ? (raw as number[]) : [];
    const low = numeric ? Math.min(...numbers) : 0;
    const high = numeric ? Math.max(...numbers) : 0;
    const logScale = numeric && low > 0 && high / low >= 100;
    const values = scored.map((r) => ({
      value: numeric ? (r.params[name] as number) : JSON.stringify(r.params[name] ?? null),
      score: r.mean as number,
      trial: r.trial,
      tie: r.tie_with_best ? "tied with the best" : "behind the best",
    }));
    return {
      width: size.width,
      height: size.height,
      title: name,
      data: { values },
      mark: { type: "point" as const, size: 36, color },
      encoding: {
        x: numeric
          ? {
              field: "value",
              type: "quantitative" as const,
              title: name,
              scale: logScale ? { type: "log" as const } : { zero: false },
              axis: numbers.every(Number.isInteger) ? { tickMinStep: 1, format: "d" } : {},
            }
          : { field: "value", type: "nominal" as const, title: name, axis: { labelAngle: 0 } },
        y: { field: "score", type: "quantitative" as const, title: metric, scale: { zero: false } },
        fill: { field: "tie", type: "nominal" as const, title: null, scale: { domain: ["tied with the best", "behind the best"], range: [color, "transparent"] } },
        tooltip: [
          { field: "trial", type: "quantitative" as const },
          { field: "value", title: name },
          { field: "score", type: "quantitative" as const, format: ".4f" },
        ],
      },
    };
  });
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    config: CONFIG,
    columns: 3,
    concat: charts,
  } as TopLevelSpec;
}

/** The score of greedy ensemble selection after each round, one line per ensemble, with the best single trial for reference. */
export function selectionCurveSpec(ensembles: readonly Pick<EnsembleSummary, "kind" | "curve">[], bestSingle: number | null, metric: string, size: ChartSize = DEFAULT_SIZE): TopLevelSpec {
  const values = ensembles.flatMap((e) => e.curve.map((score, i) => ({ round: i + 1, score, ensemble: e.kind })).filter((v) => v.score !== null));
  const layers: NonNullable<Extract<TopLevelSpec, { layer: unknown }>["layer"]> = [
    {
      data: { values },
      mark: { type: "line", point: true },
      encoding: {
        x: { field: "round", type: "quantitative", title: "round", axis: { tickMinStep: 1 } },
        y: { field: "score", type: "quantitative", title: metric, scale: { zero: false } },
        color: { field: "ensemble", type: "nominal", title: "ensemble" },
        tooltip: [
          { field: "ensemble", type: "nominal" },
          { field: "round", type: "quantitative" },
          { field: "score", type: "quantitative", format: ".4f" },
        ],
      },
    },
  ];
  if (bestSingle !== null) {
    layers.push({
      data: { values: [{ best: bestSingle, label: "best single trial" }] },
      mark: { type: "rule", strokeDash: [4, 4], color: MUTED },
      encoding: { y: { field: "best", type: "quantitative" }, tooltip: [{ field: "label", type: "nominal" }, { field: "best", type: "quantitative", format: ".4f" }] },
    });
  }
  return { $schema: "https://vega.github.io/schema/vega-lite/v6.json", config: CONFIG, width: size.width, height: size.height, layer: layers };
}

/** Each member's weight in an ensemble, largest first. */
export function weightsSpec(ensemble: Pick<EnsembleSummary, "kind" | "members">, size: ChartSize = DEFAULT_SIZE): TopLevelSpec {
  const values = ensemble.members.map((m) => ({ member: `trial ${m.trial}`, weight: m.weight }));
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    config: CONFIG,
    width: size.width,
    height: { step: 18 },
    title: `${ensemble.kind} weights`,
    data: { values },
    mark: { type: "bar", color: ACCENT },
    encoding: {
      y: { field: "member", type: "nominal", title: null, sort: "-x" },
      x: { field: "weight", type: "quantitative", title: "weight" },
      tooltip: [{ field: "member", type: "nominal" }, { field: "weight", type: "quantitative", format: ".4f" }],
    },
  };
}

/** A trial's score on each fold, with its mean as a rule. */
export function foldScoresSpec(folds: TrialDetail["folds"], metric: string, size: ChartSize = { width: 300, height: 180 }): TopLevelSpec {
  const values = folds.filter((f) => f.score !== null).map((f) => ({ fold: `fold ${f.fold}`, score: f.score as number }));
  const mean = values.length === 0 ? null : values.reduce((s, v) => s + v.score, 0) / values.length;
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    config: CONFIG,
    width: size.width,
    height: size.height,
    layer: [
      {
        data: { values },
        mark: { type: "bar", color: ACCENT, opacity: 0.85 },
        encoding: {
          x: { field: "fold", type: "nominal", title: null, axis: { labelAngle: 0 }, sort: null },
          y: { field: "score", type: "quantitative", title: metric },
          tooltip: [{ field: "fold", type: "nominal" }, { field: "score", type: "quantitative", format: ".4f" }],
        },
      },
      {
        data: { values: mean === null ? [] : [{ mean }] },
        mark: { type: "rule", color: "#e45756", strokeDash: [4, 3] },
        encoding: { y: { field: "mean", type: "quantitative" } },
      },
    ],
  };
}

type Classification = NonNullable<TrialDiagnostics["classification"]>;

function curvePoints(curve: Classification["roc"]): Array<{ x: number; y: number; threshold: number | null; order: number }> {
  const out: Array<{ x: number; y: number; threshold: number | null; order: number }> = [];
  for (let i = 0; i < curve.x.length; i++) {
    const x = curve.x[i];
    const y = curve.y[i];
    if (x !== null && y !== null) out.push({ x, y, threshold: curve.thresholds[i], order: i });
  }
  return out;
}

function curveSpec(points: ReturnType<typeof curvePoints>, titles: { x: string; y: string; title: string }, reference: { x: number; y: number }[] | null, size: ChartSize): TopLevelSpec {
  const layers: NonNullable<Extract<TopLevelSpec, { layer: unknown }>["layer"]> = [];
  if (reference) {
    layers.push({
      data: { values: reference },
      mark: { type: "line", color: MUTED, strokeDash: [4, 4] },
      encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } },
    });
  }
  layers.push({
    data: { values: points },
    mark: { type: "line", color: ACCENT, strokeWidth: 2, interpolate: "linear" },
    encoding: {
      x: { field: "x", type: "quantitative", title: titles.x, scale: { domain: [0, 1] } },
      y: { field: "y", type: "quantitative", title: titles.y, scale: { domain: [0, 1] } },
      order: { field: "order", type: "quantitative" },
      tooltip: [
        { field: "x", type: "quantitative", title: titles.x, format: ".3f" },
        { field: "y", type: "quantitative", title: titles.y, format: ".3f" },
        { field: "threshold", type: "quantitative", format: ".4f" },
      ],
    },
  });
  return { $schema: "https://vega.github.io/schema/vega-lite/v6.json", config: CONFIG, title: titles.title, width: size.width, height: size.height, layer: layers };
}

export function precisionRecallSpec(diagnostics: Classification, size: ChartSize = { width: 260, height: 220 }): TopLevelSpec {
  const ap = diagnostics.average_precision;
  const base = diagnostics.positive.rows / Math.max(1, diagnostics.confusion.matrix.reduce((s, row) => s + row.reduce((a, b) => a + b, 0), 0));
  return curveSpec(
    curvePoints(diagnostics.precision_recall),
    { x: "recall", y: "precision", title: `precision-recall (AP ${ap === null ? "n/a" : ap.toFixed(3)})` },
    [
      { x: 0, y: base },
      { x: 1, y: base },
    ],
    size,
  );
}

export function rocSpec(diagnostics: Classification, size: ChartSize = { width: 260, height: 220 }): TopLevelSpec {
  const auc = diagnostics.roc_auc;
  return curveSpec(
    curvePoints(diagnostics.roc),
    { x: "false positive rate", y: "true positive rate", title: `ROC (AUC ${auc === null ? "n/a" : auc.toFixed(3)})` },
    [
      { x: 0, y: 0 },
      { x: 1, y: 1 },
    ],
    size,
  );
}

/** Reliability diagram: observed frequency of the positive class against the mean predicted probability per bin. */
export function calibrationSpec(diagnostics: Classification, size: ChartSize = { width: 260, height: 220 }): TopLevelSpec {
  const c = diagnostics.calibration;
  const values = c.mean_predicted.map((p, i) => ({ predicted: p, observed: c.fraction_positive[i], rows: c.count[i] })).filter((v) => v.predicted !== null && v.observed !== null);
  const ece = c.expected_calibration_error;
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    config: CONFIG,
    title: `calibration (ECE ${ece === null ? "n/a" : ece.toFixed(3)}, ${c.bins} ${c.strategy} bins)`,
    width: size.width,
    height: size.height,
    layer: [
      {
        data: { values: [{ x: 0, y: 0 }, { x: 1, y: 1 }] },
        mark: { type: "line", color: MUTED, strokeDash: [4, 4] },
        encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } },
      },
      {
        data: { values },
        mark: { type: "line", color: ACCENT, point: { filled: true, color: ACCENT } },
        encoding: {
          x: { field: "predicted", type: "quantitative", title: "mean predicted probability", scale: { domain: [0, 1] } },
          y: { field: "observed", type: "quantitative", title: "observed frequency", scale: { domain: [0, 1] } },
          tooltip: [
            { field: "predicted", type: "quantitative", format: ".3f" },
            { field: "observed", type: "quantitative", format: ".3f" },
            { field: "rows", type: "quantitative" },
          ],
        },
      },
    ],
  };
}

/** Counts of true against predicted class, darker for more rows. */
export function confusionSpec(confusion: Classification["confusion"], size: ChartSize = { width: 220, height: 220 }): TopLevelSpec {
  const values = confusion.matrix.flatMap((row, t) => row.map((rows, p) => ({ actual: confusion.labels[t], predicted: confusion.labels[p], rows })));
  const max = Math.max(1, ...values.map((v) => v.rows));
  const title = confusion.threshold === null ? "confusion (most probable class)" : `confusion at threshold ${confusion.threshold.toFixed(2)}`;
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    config: CONFIG,
    title,
    width: size.width,
    height: size.height,
    data: { values },
    encoding: {
      x: { field: "predicted", type: "nominal", title: "predicted", sort: confusion.labels, axis: { labelAngle: 0, orient: "top" } },
      y: { field: "actual", type: "nominal", title: "actual", sort: confusion.labels },
    },
    layer: [
      {
        mark: { type: "rect", stroke: "#ffffff", strokeWidth: 2 },
        encoding: { color: { field: "rows", type: "quantitative", title: "rows", scale: { scheme: "blues", domain: [0, max] }, legend: null } },
      },
      {
        mark: { type: "text", fontSize: 14, fontWeight: 600 },
        encoding: {
          text: { field: "rows", type: "quantitative" },
          color: { condition: { test: `datum.rows > ${max / 2}`, value: "#ffffff" }, value: "#1d252c" },
        },
      },
    ],
  };
}

/** A regressor's out-of-fold predictions against the actual values, with the line of perfect prediction. */
export function actualPredictedSpec(regression: NonNullable<TrialDiagnostics["regression"]>, size: ChartSize = { width: 300, height: 260 }): TopLevelSpec {
  const values = regression.actual.map((a, i) => ({ actual: a, predicted: regression.predicted[i] })).filter((v) => v.actual !== null && v.predicted !== null);
  const all = values.flatMap((v) => [v.actual as number, v.predicted as number]);
  const low = all.length > 0 ? Math.min(...all) : 0;
  const high = all.length > 0 ? Math.max(...all) : 1;
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    config: CONFIG,
    title: "actual against predicted",
    width: size.width,
    height: size.height,
    layer: [
      {
        data: { values: [{ x: low, y: low }, { x: high, y: high }] },
        mark: { type: "line", color: MUTED, strokeDash: [4, 4] },
        encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } },
      },
      {
        data: { values },
        mark: { type: "point", filled: true, size: 18, opacity: 0.5, color: ACCENT },
        encoding: {
          x: { field: "predicted", type: "quantitative", title: "predicted", scale: { zero: false } },
          y: { field: "actual", type: "quantitative", title: "actual", scale: { zero: false } },
        },
      },
    ],
  };
}
