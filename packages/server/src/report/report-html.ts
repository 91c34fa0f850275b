import { type Board, type BoardRow, buildBoard } from "@nightshift/aggregator";
import { RunStore } from "@nightshift/store";
import type { TopLevelSpec } from "vega-lite";
import { emptyActivity, foldEvents, type RunActivity } from "../run-activity.js";
import { ensemblesOf, isStartedRun, readRunTables, runDetail, trialDetail } from "../run-views.js";
import type { EnsemblesResponse, RunDetail, TrialDetail } from "../schemas.js";
import {
  actualPredictedSpec,
  bestSoFarSpec,
  calibrationSpec,
  confusionSpec,
  foldScoresSpec,
  paramsSpec,
  precisionRecallSpec,
  rocSpec,
  searchedParams,
  selectionCurveSpec,
  weightsSpec,
} from "../web/chart-specs.js";
import { renderSvg } from "./render-svg.js";
import { REPORT_STYLE } from "./report-style.js";

export interface ReportOptions {
  /** Rows of the leaderboard printed in full (the rest are counted). */
  readonly top?: number;
  /** The moment written as the report's date. */
  readonly now?: Date;
}

/** The report's closing section: what a score from this run does not tell. */
export const CAUTIONS: ReadonlyArray<{ title: string; text: string }> = [
  {
    title: "Validate on recent data",
    text: "Cross-validation mixes every period of the training data. If the model will score future rows, check it on the most recent period, held out by time, before relying on it; and keep rows of one entity (a machine, a customer) in one fold (folds.group in the plan), or the scores above are optimistic.",
  },
  {
    title: "Look for bias across groups",
    text: "A good overall score can hide poor results for some groups (sites, product lines, regions, or groups of people). Compare scores, error rates and calibration group by group before use, and check that no feature stands in for an attribute that must not drive the decision.",
  },
  {
    title: "Keep a human in the loop",
    text: "A prediction is a score, not a decision. Keep a person responsible for what is done with it, able to review and override it, and watch the model after deployment: data drifts, and a model that was right last year can quietly stop being right.",
  },
  {
    title: "Follow local regulation and model-risk practice",
    text: "Depending on where and for what the model is used (credit, employment, insurance, health, safety), law and your organisation's model-risk policy may require documentation, independent validation, explanations to the people affected and periodic review. This report is an input to that work, not a substitute for it.",
  },
];

const HTML_ESCAPES: Record<string, string> = { "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" };

export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => HTML_ESCAPES[c]);
}

function score(value: number | null | undefined, digits = 4): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : value.toFixed(digits);
}

function seconds(value: number | null): string {
  if (value === null) return "–";
  return value < 10 ? value.toFixed(2) : value.toFixed(0);
}

function paramsText(params: Record<string, unknown>): string {
  return Object.entries(params)
    .map(([k, v]) => `${k}=${typeof v === "number" && !Number.isInteger(v) ? Number(v.toPrecision(3)) : JSON.stringify(v)}`)
    .join(" ");
}

/** Every event of a run folded into its activity (the report reads the whole log once). */
export function readActivity(store: RunStore): RunActivity {
  const activity = emptyActivity();
  for (;;) {
    const events = store.events(activity.lastId, 1000);
    if (events.length === 0) break;
    foldEvents(activity, events);
  }
  return activity;
}

async function figure(spec: TopLevelSpec, caption: string): Promise<string> {
  return `<figure>${await renderSvg(spec)}<figcaption>${escapeHtml(caption)}</figcaption></figure>`;
}

function boardTable(board: Board, rows: readonly BoardRow[]): string {
  const head = `<tr><th>rank</th><th>trial</th><th>family</th><th class="num">${escapeHtml(board.metric)}</th><th class="num">± std</th><th class="num">folds</th><th class="num">fit s</th><th>status</th><th>parameters</th></tr>`;
  const body = rows
    .map(
      (r) =>
        `<tr class="${r.tie_with_best ? "tie" : ""}"><td class="num">${r.rank}</td><td class="num">${r.trial}</td><td>${escapeHtml(r.family)}</td>` +
        `<td class="num">${score(r.mean)}${r.tie_with_best ? ' <span class="tie-mark" title="not significantly different from the best">≈</span>' : ""}</td>` +
        `<td class="num">${score(r.std)}</td><td class="num">${r.folds.filter((f) => f !== null).length}</td><td class="num">${seconds(r.fit_s)}</td>` +
        `<td><span class="status status-${r.status}">${r.status.replace("_", " ")}</span></td><td class="params">${escapeHtml(paramsText(r.params))}</td></tr>`,
    )
    .join("\n");
  return `<table class="board"><thead>${head}</thead><tbody>${body}</tbody></table>`;
}

function planFacts(detail: RunDetail): string {
  const plan = detail.plan as { folds?: { k?: number; repeats?: number; group?: string }; budget?: { trials?: number; hours?: number }; halving?: { eta?: number } | null; data?: { holdout?: number; target?: string } };
  const facts: Array<[string, string]> = [
    ["task", detail.task],
    ["target", plan.data?.target ?? "–"],
    ["metric", `${detail.metric} (${detail.direction === "max" ? "higher" : "lower"} is better)`],
    ["validation", `${plan.folds?.k ?? detail.fold_count}-fold cross-validation${(plan.folds?.repeats ?? 1) > 1 ? ` × ${plan.folds?.repeats} repeats` : ""}${plan.folds?.group ? `, grouped by ${plan.folds.group}` : ""}`],
    ["hold-out", plan.data?.holdout ? `${Math.round(plan.data.holdout * 100)}% of rows sealed` : "none"],
    ["trials", `${detail.trials.total} planned: ${detail.trials.done} done, ${detail.trials.pruned} pruned by halving, ${detail.trials.failed + detail.trials.timed_out} failed, ${detail.trials.running + detail.trials.queued} not finished`],
    ["state", detail.state],
    ["families", detail.families.join(", ")],
  ];
  return `<dl class="facts">${facts.map(([k, v]) => `<dt>${escapeHtml(k)}</dt><dd>${escapeHtml(v)}</dd>`).join("")}</dl>`;
}

function headline(detail: RunDetail, board: Board, ensembles: EnsemblesResponse): string {
  const best = board.rows.find((r) => r.status === "done" && r.mean !== null);
  const tied = board.rows.filter((r) => r.tie_with_best).length;
  const lines: string[] = [];
  if (best) {
    lines.push(
      `Best trial: <strong>#${best.trial} ${escapeHtml(best.family)}</strong>, ${escapeHtml(board.metric)} ${score(best.mean)} ± ${score(best.std)} over ${best.folds.length} folds.`,
    );
    lines.push(
      tied > 1
        ? `${tied} trials are statistically tied with it (corrected resampled t-test, Nadeau &amp; Bengio 2003): their differences are within fold noise, so prefer the simplest or fastest of them.`
        : "No other trial is statistically tied with it.",
    );
  } else lines.push("No trial has finished yet.");
  // Ranked by the nested estimate: the plain score was fitted on the same rows it is measured on.
  const sign = board.direction === "max" ? -1 : 1;
  const bestEnsemble = [...ensembles.ensembles].filter((e) => e.nested.mean !== null).sort((a, b) => sign * ((a.nested.mean as number) - (b.nested.mean as number)))[0];
  if (bestEnsemble) {
    lines.push(
      `Best ensemble: <strong>${escapeHtml(bestEnsemble.kind)}</strong> of ${bestEnsemble.members.length} trials, nested estimate ${score(bestEnsemble.nested.mean)} ± ${score(bestEnsemble.nested.std)} (${score(bestEnsemble.mean)} on the rows it was fitted on).`,
    );
  }
  lines.push(
    detail.holdout
      ? `The hold-out was opened at ${escapeHtml(detail.holdout.opened_at)}: ${detail.holdout.scores.map((s) => `${escapeHtml(s.name)} ${score(s.score)}`).join(", ")}.`
      : "The hold-out is still sealed: no score in this report has seen it.",
  );
  return `<ul class="headline">${lines.map((l) => `<li>${l}</li>`).join("")}</ul>`;
}

async function ensembleSection(ensembles: EnsemblesResponse, board: Board): Promise<string> {
  if (ensembles.ensembles.length === 0) return `<p class="empty">No ensemble has been built for this run yet.</p>`;
  const best = board.rows.find((r) => r.status === "done" && r.mean !== null)?.mean ?? null;
  const rows = ensembles.ensembles
    .map(
      (e) =>
        `<tr><td>${escapeHtml(e.name)}</td><td>${escapeHtml(e.kind)}</td><td class="num">${score(e.mean)}</td><td class="num">${score(e.std)}</td><td class="num">${score(e.nested.mean)} ± ${score(e.nested.std)}</td><td class="num">${e.members.length}</td></tr>`,
    )
    .join("");
  const parts = [
    `<table class="compact"><thead><tr><th>name</th><th>kind</th><th class="num">${escapeHtml(board.metric)}</th><th class="num">± std</th><th class="num">nested</th><th class="num">members</th></tr></thead><tbody>${rows}</tbody></table>`,
  ];
  const withCurves = ensembles.ensembles.filter((e) => e.curve.length > 0);
  const figures: string[] = [];
  if (withCurves.length > 0) figures.push(await figure(selectionCurveSpec(withCurves, best, board.metric), "Out-of-fold score after each round of greedy ensemble selection (Caruana et al. 2004); the dashed line is the best single trial."));
  for (const e of ensembles.ensembles) {
    if (e.members.length > 0) figures.push(await figure(weightsSpec(e), `Member weights of the ${e.kind} ensemble '${e.name}'.`));
  }
  parts.push(`<div class="figures">${figures.join("")}</div>`);
  return parts.join("");
}

async function holdoutSection(detail: RunDetail): Promise<string> {
  if (!detail.holdout) return `<p class="empty">The hold-out has not been opened. It is opened once, at the end, so that one score is free of every choice made on the cross-validation scores.</p>`;
  const rows = detail.holdout.scores.map((s) => `<tr><td>${escapeHtml(s.name)}</td><td class="num">${score(s.score)}</td></tr>`).join("");
  return `<p>Opened at ${escapeHtml(detail.holdout.opened_at)}.</p><table class="compact"><thead><tr><th>model</th><th class="num">${escapeHtml(detail.metric)} on the hold-out</th></tr></thead><tbody>${rows}</tbody></table>`;
}

async function trialSection(detail: TrialDetail): Promise<string> {
  const figures = [await figure(foldScoresSpec(detail.folds, detail.metric), `Trial ${detail.trial}: score on each fold; the dashed line is the mean.`)];
  const d = detail.diagnostics;
  if (d?.classification) {
    const c = d.classification;
    figures.push(await figure(precisionRecallSpec(c), `Precision against recall for '${c.positive.label}' from ${d.rows} out-of-fold predictions; the dashed line is the share of positive rows.`));
    figures.push(await figure(rocSpec(c), "True against false positive rate; the diagonal is a random ranking."));
    figures.push(await figure(calibrationSpec(c), "Observed frequency against mean predicted probability per bin; the diagonal is perfect calibration."));
    figures.push(
      await figure(
        confusionSpec(c.confusion),
        c.confusion.threshold === null
          ? "Rows by true class, columns by most probable class."
          : `At threshold ${c.confusion.threshold}: precision ${score(c.confusion.precision, 3)}, recall ${score(c.confusion.recall, 3)}, F1 ${score(c.confusion.f1, 3)}.`,
      ),
    );
  } else if (d?.regression) {
    figures.push(await figure(actualPredictedSpec(d.regression), `Out-of-fold predictions of ${d.rows} rows: RMSE ${score(d.regression.rmse)}, MAE ${score(d.regression.mae)}, R² ${score(d.regression.r2)}.`));
  }
  return `<p>${escapeHtml(detail.row.family)}: <code>${escapeHtml(paramsText(detail.row.params))}</code></p><div class="figures">${figures.join("")}</div>`;
}

/**
 * One self-contained HTML page about a run: the facts of the plan, the leaderboard, best score
 * against time, score against each hyperparameter, the ensembles, the hold-out, the best
 * trial's curves, and the cautions. Charts are inline SVG drawn here; the page has no script
 * and loads nothing, so it opens offline and can be mailed or archived as one file.
 */
export async function renderReport(runDir: string, options: ReportOptions = {}): Promise<string> {
  const store = RunStore.open(runDir, { readonly: true });
  try {
    if (!isStartedRun(store)) throw new Error(`${runDir}: the run has not started; there is nothing to report`);
    const now = options.now ?? new Date();
    const activity = readActivity(store);
    const board = buildBoard(store);
    const tables = readRunTables(store);
    const detail = runDetail(board.run, tables, activity, now.getTime());
    const ensembles = ensemblesOf(tables);
    const top = options.top ?? 25;
    const best = board.rows.find((r) => r.status === "done" && r.mean !== null);
    const bestDetail = best ? trialDetail(store, best.trial, { curves: true, threshold: 0.5, bins: 10, strategy: "uniform", points: 300 }, board, tables.results) : null;

    const sections: string[] = [];
    sections.push(`<section><h2>In short</h2>${headline(detail, board, ensembles)}${planFacts(detail)}</section>`);
    const shown = board.rows.slice(0, top);
    sections.push(
      `<section><h2>Leaderboard</h2><p class="note">Mean and sample standard deviation over the folds. ≈ marks trials not significantly different from the best (corrected resampled t-test, Nadeau &amp; Bengio 2003, α = 0.05).${board.rows.length > shown.length ? ` The top ${shown.length} of ${board.rows.length} trials are shown.` : ""}</p>${boardTable(board, shown)}</section>`,
    );
    const timelineFigure = detail.timeline.length > 0 ? await figure(bestSoFarSpec(detail.timeline, board.metric, board.direction, { width: 640, height: 240 }), "Each finished trial's score when it finished (dots, by family) and the best score so far (line).") : `<p class="empty">No trial has finished yet.</p>`;
    sections.push(`<section><h2>Best score so far</h2>${timelineFigure}</section>`);
    const familyFigures: string[] = [];
    for (const family of detail.families) {
      const rows = board.rows.filter((r) => r.family === family && r.mean !== null);
      if (searchedParams(rows).length === 0) continue;
      familyFigures.push(`<h3>${escapeHtml(family)}</h3>` + (await figure(paramsSpec(board.rows, family, board.metric), `Mean ${board.metric} of each ${family} trial against each searched hyperparameter; filled points are tied with the best.`)));
    }
    sections.push(`<section><h2>Score against hyperparameters</h2>${familyFigures.length > 0 ? familyFigures.join("") : '<p class="empty">No family has a searched hyperparameter with scored trials yet.</p>'}</section>`);
    sections.push(`<section><h2>Ensembles</h2>${await ensembleSection(ensembles, board)}</section>`);
    sections.push(`<section><h2>Hold-out</h2>${await holdoutSection(detail)}</section>`);
    if (bestDetail) sections.push(`<section><h2>Best trial: #${bestDetail.trial}</h2>${await trialSection(bestDetail)}</section>`);
    sections.push(
      `<section class="cautions"><h2>Before you use this model</h2>${CAUTIONS.map((c) => `<div class="caution"><h3>${escapeHtml(c.title)}</h3><p>${escapeHtml(c.text)}</p></div>`).join("")}</section>`,
    );

    return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<title>nightshift report: ${escapeHtml(board.run)}</title>
<style>${REPORT_STYLE}</style>
</head>
<body>
<header><p class="brand">nightshift report</p><h1>${escapeHtml(board.run)}</h1><p class="meta">${escapeHtml(detail.metric)} · ${escapeHtml(detail.task)} · written ${escapeHtml(now.toISOString())}</p></header>
<main>
${sections.join("\n")}
</main>
<footer>Written by nightshift from the run store of ${escapeHtml(board.run)}. This page is one file: it loads nothing and runs no script.</footer>
</body>
</html>
`;
  } finally {
    store.close();
  }
}
