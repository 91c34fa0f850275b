import type { RunList, RunSummary } from "../schemas.js";
import { duration, getJson, h, panel, progressBar, quietWarning, score, stateBadge, throttle, when } from "./dom.js";
import { followRun } from "./live.js";

function progressCell(run: RunSummary): HTMLElement {
  const p = run.progress;
  const label = `${p.folds_done} / ${p.folds_planned} folds`;
  return h(
    "div",
    { class: "progress-cell" },
    progressBar(p.fraction, label),
    run.state === "running" ? h("span", { class: "eta" }, p.eta_s === null ? "ETA –" : `ETA ${duration(p.eta_s)}`) : null,
    quietWarning(run.state, run.last_event_at),
  );
}

function runRow(run: RunSummary): HTMLElement {
  const href = `#/runs/${encodeURIComponent(run.id)}`;
  return h(
    "tr",
    { class: "clickable", "data-run": run.id, onclick: () => (location.hash = href) },
    h("td", {}, h("a", { href }, run.id)),
    h("td", {}, stateBadge(run.state)),
    h("td", {}, progressCell(run)),
    h("td", { class: "num" }, `${run.trials.done + run.trials.pruned + run.trials.failed + run.trials.timed_out} / ${run.trials.total}`),
    h("td", {}, run.metric, h("span", { class: "muted" }, run.direction === "max" ? " ↑" : " ↓")),
    h("td", { class: "num" }, run.best ? score(run.best.score) : "–", run.best ? h("span", { class: "muted" }, ` #${run.best.trial}`) : null),
    h("td", { class: "muted" }, when(run.created_at)),
  );
}

/** The runs folder: every run with its state, progress, pace and best score, live while a run runs. */
export async function showRunList(root: HTMLElement, setLive: (connected: boolean) => void): Promise<() => void> {
  const body = h("tbody");
  const table = h(
    "table",
    { class: "table runs" },
    h("thead", {}, h("tr", {}, h("th", {}, "run"), h("th", {}, "state"), h("th", {}, "progress"), h("th", { class: "num" }, "trials"), h("th", {}, "metric"), h("th", { class: "num" }, "best"), h("th", {}, "started"))),
    body,
  );
  const empty = h("p", { class: "empty" }, "No run folders here yet. Start one with ", h("code", {}, "nightshift run <plan.yaml>"), ".");
  root.replaceChildren(h("div", { class: "page-head" }, h("h1", {}, "Runs")), panel("All runs", table, empty));
  const stops = new Map<string, () => void>();

  const render = async (): Promise<void> => {
    const list = await getJson<RunList>("/api/runs");
    body.replaceChildren(...list.runs.map(runRow));
    empty.hidden = list.runs.length > 0;
    // Follow the runs that are running (a few at most), so the page updates as they progress.
    const running = list.runs.filter((r) => r.state === "running").slice(0, 8);
    for (const [id, stop] of stops) {
      if (!running.some((r) => r.id === id)) {
        stop();
        stops.delete(id);
      }
    }
    for (const run of running) if (!stops.has(run.id)) stops.set(run.id, followRun(run.id, run.last_event_id, refresh, setLive));
  };
  const refresh = throttle(() => void render(), 1000);
  await render();
  return () => {
    for (const stop of stops.values()) stop();
  };
}
