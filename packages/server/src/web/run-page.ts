import type { BoardRow } from "@nightshift/aggregator";
import type { BoardPage, BoardSortKey, EnsemblesResponse, RunDetail } from "../schemas.js";
import { bestSoFarSpec, paramsSpec, searchedParams, selectionCurveSpec, weightsSpec } from "./chart-specs.js";
import { drawChart, duration, getJson, h, panelSpanning, paramsText, progressBar, quietWarning, score, seconds, stateBadge, throttle, when } from "./dom.js";
import { followRun } from "./live.js";

const PAGE_SIZE = 50;

interface BoardState {
  family: string;
  sort: BoardSortKey;
  order: "asc" | "desc" | null;
  offset: number;
}

const COLUMNS: ReadonlyArray<{ key: BoardSortKey | null; label: string; numeric: boolean }> = [
  { key: "rank", label: "rank", numeric: true },
  { key: "trial", label: "trial", numeric: true },
  { key: "family", label: "family", numeric: false },
  { key: "mean", label: "score", numeric: true },
  { key: "std", label: "± std", numeric: true },
  { key: null, label: "folds", numeric: true },
  { key: "fit_s", label: "fit s", numeric: true },
  { key: "predict_s", label: "predict s", numeric: true },
  { key: "status", label: "status", numeric: false },
  { key: null, label: "parameters", numeric: false },
];

function runApi(id: string): string {
  return `/api/runs/${encodeURIComponent(id)}`;
}

function trialHref(runId: string, trial: number): string {
  return `#/runs/${encodeURIComponent(runId)}/trials/${trial}`;
}

function boardRow(runId: string, row: BoardRow): HTMLElement {
  const href = trialHref(runId, row.trial);
  return h(
    "tr",
    { class: `clickable${row.tie_with_best ? " tie" : ""}`, "data-trial": row.trial, onclick: () => (location.hash = href) },
    h("td", { class: "num" }, row.rank),
    h("td", { class: "num" }, h("a", { href }, `#${row.trial}`)),
    h("td", {}, h("span", { class: `family family-${row.family}` }, row.family)),
    h("td", { class: "num strong" }, score(row.mean), row.tie_with_best ? h("span", { class: "tie-mark", title: "not significantly different from the best (corrected resampled t-test)" }, " ≈") : null),
    h("td", { class: "num" }, score(row.std)),
    h("td", { class: "num" }, row.folds.filter((f) => f !== null).length),
    h("td", { class: "num" }, seconds(row.fit_s)),
    h("td", { class: "num" }, seconds(row.predict_s)),
    h("td", {}, h("span", { class: `status status-${row.status}` }, row.status.replace("_", " "))),
    h("td", { class: "params", title: row.message ?? "" }, paramsText(row.params)),
  );
}

function summaryHead(detail: RunDetail): HTMLElement {
  const p = detail.progress;
  return h(
    "div",
    { class: "page-head" },
    h("div", {}, h("h1", {}, detail.id, " ", stateBadge(detail.state), quietWarning(detail.state, detail.last_event_at)), h("p", { class: "muted" }, `${detail.task} · ${detail.metric} (${detail.direction === "max" ? "higher" : "lower"} is better) · ${detail.fold_count} folds · started ${when(detail.created_at)}`)),
    h(
      "div",
      { class: "head-stats" },
      h("div", { class: "stat" }, h("span", { class: "stat-label" }, "progress"), progressBar(p.fraction, `${p.folds_done} / ${p.folds_planned} folds`)),
      h("div", { class: "stat" }, h("span", { class: "stat-label" }, detail.state === "running" ? "ETA" : "trials"), h("span", { class: "stat-value" }, detail.state === "running" ? duration(p.eta_s) : `${detail.trials.done} done · ${detail.trials.pruned} pruned · ${detail.trials.failed + detail.trials.timed_out} failed`)),
      h("div", { class: "stat" }, h("span", { class: "stat-label" }, "best"), detail.best ? h("a", { class: "stat-value", href: trialHref(detail.id, detail.best.trial) }, `${score(detail.best.score)} (#${detail.best.trial})`) : h("span", { class: "stat-value" }, "–")),
      h("div", { class: "stat" }, h("span", { class: "stat-label" }, "hold-out"), h("span", { class: "stat-value" }, detail.holdout ? `opened ${when(detail.holdout.opened_at)}` : "sealed")),
    ),
  );
}

/** A run: its progress, leaderboard, best score against time, hyperparameters, ensembles and hold-out; live while it runs. */
export async function showRunPage(root: HTMLElement, runId: string, setLive: (connected: boolean) => void): Promise<() => void> {
  const state: BoardState = { family: "", sort: "rank", order: null, offset: 0 };
  const head = h("div");
  const timelineChart = h("div", { class: "chart fill" });
  const familySelect = h("select", { "aria-label": "family" });
  const boardHead = h("tr");
  const boardBody = h("tbody");
  const pager = h("div", { class: "pager" });
  const paramsFamily = h("select", { "aria-label": "family of the hyperparameter charts" });
  const paramsChart = h("div", { class: "chart" });
  const ensemblesBox = h("div");
  const holdoutBox = h("div");

  root.replaceChildren(
    head,
    h(
      "div",
      { class: "grid" },
      panelSpanning("span-2", "Best score so far", timelineChart),
      h("section", { class: "panel" }, h("h2", {}, "Hold-out"), holdoutBox),
      h(
        "section",
        { class: "panel wide" },
        h("div", { class: "panel-head" }, h("h2", {}, "Leaderboard"), h("label", { class: "control" }, "family ", familySelect)),
        h("p", { class: "muted small" }, "≈ and a tinted row: not significantly different from the best trial (corrected resampled t-test, Nadeau & Bengio 2003). Click a column to sort, a row to open the trial."),
        h("div", { class: "table-wrap" }, h("table", { class: "table board" }, h("thead", {}, boardHead), boardBody)),
        pager,
      ),
      h("section", { class: "panel wide" }, h("div", { class: "panel-head" }, h("h2", {}, "Score against hyperparameters"), h("label", { class: "control" }, "family ", paramsFamily)), paramsChart),
      panelSpanning("wide", "Ensembles", ensemblesBox),
    ),
  );

  familySelect.addEventListener("change", () => {
    state.family = familySelect.value;
    state.offset = 0;
    void renderBoard();
  });
  paramsFamily.addEventListener("change", () => void renderParams());

  let detail: RunDetail | null = null;
  let page: BoardPage | null = null;

  const renderBoard = async (): Promise<void> => {
    const query = new URLSearchParams({ sort: state.sort, limit: String(PAGE_SIZE), offset: String(state.offset) });
    if (state.order) query.set("order", state.order);
    if (state.family) query.set("family", state.family);
    page = await getJson<BoardPage>(`${runApi(runId)}/board?${query}`);
    const current = page;
    if (familySelect.options.length !== current.families.length + 1) {
      familySelect.replaceChildren(h("option", { value: "" }, "all"), ...current.families.map((f) => h("option", { value: f }, f)));
      familySelect.value = state.family;
    }
    boardHead.replaceChildren(
      ...COLUMNS.map((c) => {
        const active = c.key !== null && c.key === current.sort;
        const label = c.key === "mean" ? current.metric : c.label;
        const th = h("th", { class: `${c.numeric ? "num" : ""}${c.key ? " sortable" : ""}${active ? " active" : ""}`, "aria-sort": active ? (current.order === "asc" ? "ascending" : "descending") : null }, label, active ? (current.order === "asc" ? " ▲" : " ▼") : "");
        if (c.key !== null) {
          const key = c.key;
          th.addEventListener("click", () => {
            state.order = state.sort === key ? (current.order === "asc" ? "desc" : "asc") : null;
            state.sort = key;
            state.offset = 0;
            void renderBoard();
          });
        }
        return th;
      }),
    );
    boardBody.replaceChildren(...current.rows.map((r) => boardRow(runId, r)));
    const last = Math.min(current.total, current.offset + current.rows.length);
    pager.replaceChildren(
      h("button", { type: "button", disabled: current.offset === 0, onclick: () => ((state.offset = Math.max(0, state.offset - PAGE_SIZE)), void renderBoard()) }, "‹ previous"),
      h("span", { class: "muted" }, current.total === 0 ? "no trials" : `trials ${current.offset + 1}–${last} of ${current.total}`),
      h("button", { type: "button", disabled: last >= current.total, onclick: () => ((state.offset += PAGE_SIZE), void renderBoard()) }, "next ›"),
    );
  };

  const renderParams = async (): Promise<void> => {
    if (!detail) return;
    if (paramsFamily.options.length !== detail.families.length) {
      const chosen = paramsFamily.value || detail.families[0] || "";
      paramsFamily.replaceChildren(...detail.families.map((f) => h("option", { value: f }, f)));
      paramsFamily.value = chosen;
    }
    const family = paramsFamily.value;
    if (!family) return;
    const rows = await getJson<BoardPage>(`${runApi(runId)}/board?family=${encodeURIComponent(family)}&limit=10000`);
    const scored = rows.rows.filter((r) => r.mean !== null);
    if (searchedParams(scored).length === 0) {
      paramsChart.replaceChildren(h("p", { class: "empty" }, scored.length === 0 ? "No scored trial of this family yet." : "This family has no searched hyperparameter (every trial used the same values)."));
      return;
    }
    await drawChart(paramsChart, paramsSpec(rows.rows, family, rows.metric), scored.length * searchedParams(scored).length);
    paramsChart.dataset.family = family;
  };

  const renderEnsembles = async (): Promise<void> => {
    const ensembles = await getJson<EnsemblesResponse>(`${runApi(runId)}/ensembles`);
    if (ensembles.ensembles.length === 0) {
      ensemblesBox.replaceChildren(h("p", { class: "empty" }, "No ensemble yet: they are built from the best trials when the search ends."));
    } else {
      const curveChart = h("div", { class: "chart" });
      const weightCharts = ensembles.ensembles.filter((e) => e.members.length > 0).map(() => h("div", { class: "chart" }));
      ensemblesBox.replaceChildren(
        h(
          "table",
          { class: "table compact" },
          h("thead", {}, h("tr", {}, h("th", {}, "name"), h("th", {}, "kind"), h("th", { class: "num" }, ensembles.metric), h("th", { class: "num" }, "± std"), h("th", { class: "num" }, "nested"), h("th", { class: "num" }, "members"))),
          h(
            "tbody",
            {},
            ...ensembles.ensembles.map((e) =>
              h("tr", {}, h("td", {}, e.name), h("td", {}, e.kind), h("td", { class: "num strong" }, score(e.mean)), h("td", { class: "num" }, score(e.std)), h("td", { class: "num" }, `${score(e.nested.mean)} ± ${score(e.nested.std)}`), h("td", { class: "num" }, e.members.length)),
            ),
          ),
        ),
        h("div", { class: "chart-row" }, curveChart, ...weightCharts),
      );
      const withCurves = ensembles.ensembles.filter((e) => e.curve.length > 0);
      if (withCurves.length > 0) await drawChart(curveChart, selectionCurveSpec(withCurves, detail?.best?.score ?? null, ensembles.metric));
      const weighted = ensembles.ensembles.filter((e) => e.members.length > 0);
      await Promise.all(weighted.map((e, i) => drawChart(weightCharts[i], weightsSpec(e, { width: 280, height: 200 }))));
    }
    holdoutBox.replaceChildren(
      ensembles.holdout
        ? h(
            "div",
            {},
            h("p", { class: "muted" }, `Opened ${when(ensembles.holdout.opened_at)}.`),
            h("table", { class: "table compact" }, h("tbody", {}, ...ensembles.holdout.scores.map((s) => h("tr", {}, h("td", {}, s.name), h("td", { class: "num strong" }, score(s.score)))))),
          )
        : h("p", { class: "empty" }, "Sealed. It is opened once, at the end, so that one score is free of every choice made on the cross-validation scores."),
    );
  };

  const renderAll = async (): Promise<void> => {
    detail = await getJson<RunDetail>(runApi(runId));
    head.replaceChildren(summaryHead(detail));
    if (detail.timeline.some((p) => p.score !== null)) await drawChart(timelineChart, bestSoFarSpec(detail.timeline, detail.metric, detail.direction, { width: "container", height: 220 }), detail.timeline.length);
    else timelineChart.replaceChildren(h("p", { class: "empty" }, "No trial has finished yet."));
    await Promise.all([renderBoard(), renderEnsembles()]);
  };

  await renderAll();
  await renderParams();
  // One refresh at a time; events that arrive meanwhile ask for one more after it.
  let rendering = false;
  let again = false;
  const refreshNow = async (): Promise<void> => {
    if (rendering) {
      again = true;
      return;
    }
    rendering = true;
    try {
      await renderAll();
    } catch {
      // The next event (or the stream's reconnection) tries again.
    } finally {
      rendering = false;
      if (again) {
        again = false;
        refresh();
      }
    }
  };
  const refresh = throttle(() => void refreshNow(), 1500);
  // The hyperparameter charts read every trial of a family: they follow a live run more slowly.
  const refreshParams = throttle(() => void renderParams().catch(() => undefined), 15_000);
  const stop = followRun(runId, detail ? (detail as RunDetail).last_event_id : 0, (kind) => {
    refresh();
    if (kind === "trial_done" || kind === "run_finished") refreshParams();
  }, setLive);
  return stop;
}
