import type { TrialDetail } from "../schemas.js";
import { actualPredictedSpec, calibrationSpec, confusionSpec, foldScoresSpec, precisionRecallSpec, rocSpec } from "./chart-specs.js";
import { debounce, drawChart, getJson, h, panel, panelSpanning, score, seconds } from "./dom.js";

function trialApi(runId: string, trial: number, query: URLSearchParams): string {
  return `/api/runs/${encodeURIComponent(runId)}/trials/${trial}?${query}`;
}

function paramsTable(params: Record<string, unknown>): HTMLElement {
  return h("table", { class: "table compact" }, h("tbody", {}, ...Object.entries(params).map(([k, v]) => h("tr", {}, h("th", {}, k), h("td", { class: "mono" }, JSON.stringify(v))))));
}

function foldsTable(detail: TrialDetail): HTMLElement {
  return h(
    "table",
    { class: "table compact" },
    h("thead", {}, h("tr", {}, h("th", { class: "num" }, "fold"), h("th", { class: "num" }, "repeat"), h("th", { class: "num" }, detail.metric), h("th", { class: "num" }, "fit s"), h("th", { class: "num" }, "predict s"), h("th", {}, "error"))),
    h(
      "tbody",
      {},
      ...detail.folds.map((f) =>
        h("tr", {}, h("td", { class: "num" }, f.fold), h("td", { class: "num" }, f.repeat), h("td", { class: "num" }, score(f.score)), h("td", { class: "num" }, seconds(f.fit_s)), h("td", { class: "num" }, seconds(f.predict_s)), h("td", { class: "muted" }, f.error ?? "")),
      ),
    ),
  );
}

/** One trial: parameters, fold scores and times, halving decisions, and its out-of-fold curves with a threshold slider. */
export async function showTrialPage(root: HTMLElement, runId: string, trial: number): Promise<() => void> {
  const query = new URLSearchParams({ curves: "true", threshold: "0.5" });
  const detail = await getJson<TrialDetail>(trialApi(runId, trial, query));
  const row = detail.row;
  const foldChart = h("div", { class: "chart" });
  const diagnostics = h("div", { class: "chart-row" });
  const confusionChart = h("div", { class: "chart" });
  const thresholdValue = h("output", { class: "strong" }, "0.50");
  const slider = h("input", { type: "range", min: 0, max: 1, step: 0.01, value: 0.5, "aria-label": "threshold" });
  const rates = h("p", { class: "rates" });
  const classSelect = h("select", { "aria-label": "class scored one against the rest" });

  root.replaceChildren(
    h(
      "div",
      { class: "page-head" },
      h(
        "div",
        {},
        h("p", { class: "crumb" }, h("a", { href: `#/runs/${encodeURIComponent(runId)}` }, `← ${runId}`)),
        h("h1", {}, `Trial #${trial} `, h("span", { class: `family family-${row.family}` }, row.family), " ", h("span", { class: `status status-${row.status}` }, row.status.replace("_", " "))),
        row.message ? h("p", { class: "error" }, row.message) : null,
      ),
      h(
        "div",
        { class: "head-stats" },
        h("div", { class: "stat" }, h("span", { class: "stat-label" }, detail.metric), h("span", { class: "stat-value" }, `${score(row.mean)} ± ${score(row.std)}`)),
        h("div", { class: "stat" }, h("span", { class: "stat-label" }, "rank"), h("span", { class: "stat-value" }, `${row.rank}${row.tie_with_best ? " ≈ tied with the best" : ""}`)),
        h("div", { class: "stat" }, h("span", { class: "stat-label" }, "fit / predict per fold"), h("span", { class: "stat-value" }, `${seconds(row.fit_s)} s / ${seconds(row.predict_s)} s`)),
      ),
    ),
    h(
      "div",
      { class: "grid" },
      panel("Parameters", paramsTable(row.params)),
      panelSpanning("span-2", "Fold scores", h("div", { class: "chart-row" }, foldChart, foldsTable(detail))),
      detail.halving.length > 0
        ? panel(
            "Halving decisions",
            h(
              "table",
              { class: "table compact" },
              h("thead", {}, h("tr", {}, h("th", { class: "num" }, "batch"), h("th", { class: "num" }, "rung"), h("th", { class: "num" }, "score"), h("th", {}, "decision"))),
              h("tbody", {}, ...detail.halving.map((d) => h("tr", {}, h("td", { class: "num" }, d.batch), h("td", { class: "num" }, d.rung), h("td", { class: "num" }, score(d.score)), h("td", {}, d.promoted ? "promoted" : "dropped")))),
            ),
          )
        : null,
      h("section", { class: "panel wide" }, h("div", { class: "panel-head" }, h("h2", {}, "Out-of-fold predictions"), detail.diagnostics?.task === "multiclass" ? h("label", { class: "control" }, "class ", classSelect) : null), diagnostics),
    ),
  );
  await drawChart(foldChart, foldScoresSpec(detail.folds, detail.metric));

  const renderConfusion = async (current: TrialDetail): Promise<void> => {
    const c = current.diagnostics?.classification;
    if (!c) return;
    rates.replaceChildren(`precision ${score(c.confusion.precision, 3)} · recall ${score(c.confusion.recall, 3)} · F1 ${score(c.confusion.f1, 3)} · accuracy ${score(c.confusion.accuracy, 3)}`);
    await drawChart(confusionChart, confusionSpec(c.confusion));
  };

  const renderDiagnostics = async (current: TrialDetail): Promise<void> => {
    const d = current.diagnostics;
    if (!d || d.rows === 0) {
      diagnostics.replaceChildren(h("p", { class: "empty" }, "No stored out-of-fold predictions for this trial yet."));
      return;
    }
    if (d.regression) {
      const chart = h("div", { class: "chart" });
      diagnostics.replaceChildren(chart, h("p", { class: "rates" }, `RMSE ${score(d.regression.rmse)} · MAE ${score(d.regression.mae)} · R² ${score(d.regression.r2)} over ${d.rows} rows`));
      await drawChart(chart, actualPredictedSpec(d.regression));
      return;
    }
    const c = d.classification;
    if (!c) return;
    const pr = h("div", { class: "chart" });
    const roc = h("div", { class: "chart" });
    const calibration = h("div", { class: "chart" });
    const confusionBox =
      d.task === "binary"
        ? h("div", { class: "confusion-box" }, confusionChart, h("label", { class: "slider" }, "threshold ", slider, " ", thresholdValue), rates)
        : h("div", { class: "confusion-box" }, confusionChart, rates);
    diagnostics.replaceChildren(pr, roc, calibration, confusionBox);
    await Promise.all([drawChart(pr, precisionRecallSpec(c)), drawChart(roc, rocSpec(c)), drawChart(calibration, calibrationSpec(c)), renderConfusion(current)]);
  };

  if (detail.diagnostics?.task === "multiclass") {
    classSelect.replaceChildren(...(detail.diagnostics.classification?.confusion.labels ?? []).map((label, i) => h("option", { value: i }, label)));
    classSelect.addEventListener("change", () => {
      query.set("positive", classSelect.value);
      void getJson<TrialDetail>(trialApi(runId, trial, query)).then(renderDiagnostics);
    });
  }

  const moveThreshold = debounce(() => {
    query.set("threshold", slider.value);
    void getJson<TrialDetail>(trialApi(runId, trial, query)).then(renderConfusion);
  }, 120);
  slider.addEventListener("input", () => {
    thresholdValue.textContent = Number(slider.value).toFixed(2);
    moveThreshold();
  });

  await renderDiagnostics(detail);
  return () => undefined;
}
