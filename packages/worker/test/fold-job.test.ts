import { allRows, type FoldJob, JOB_SCHEMA_VERSION, metricByName, NODE_MAJOR, parseCsvDataset, planFolds } from "@nightshift/core";
import { stringify } from "csv-stringify/sync";
import { describe, expect, it } from "vitest";
import { generateTurbineRows, TURBINE_COLUMNS } from "../../cli/src/demo/turbine-data.js";
import { createFoldContext } from "../src/fold-context.js";
import { runFoldJob } from "../src/fold-job.js";

const text = stringify(generateTurbineRows({ turbines: 40, weeks: 20, seed: 3 }), { header: true, columns: [...TURBINE_COLUMNS] });
const dataset = parseCsvDataset(text, "turbines.csv", { target: "failed_within_30d", ignore: ["turbine_id"] });
const foldTests = planFolds(dataset, allRows(dataset.rowCount), { k: 3, repeats: 1, stratify: true }, 1).map((f) => f.test);

function job(family: FoldJob["family"], params: FoldJob["params"], fold = 0): FoldJob {
  return { schema: JOB_SCHEMA_VERSION, node: NODE_MAJOR, run: "r", dataset: dataset.fingerprint, seed: 5, trial: 2, fold, family, params, timeoutSeconds: null };
}

describe("the fold job", () => {
  it.each([
    ["logistic", { l2: 0.5 }],
    ["knn", { k: 7 }],
    ["tree", { depth: 4 }],
    ["boosted", { rounds: 20, leaves: 8 }],
  ] as const)("gives the same bits with preprocessing reused from the worker's memo (%s)", (family, params) => {
    const shared = createFoldContext(dataset, foldTests, metricByName("average_precision"));
    const first = runFoldJob(shared, job(family, params));
    const reused = runFoldJob(shared, job(family, params));
    const fresh = runFoldJob(createFoldContext(dataset, foldTests, metricByName("average_precision")), job(family, params));
    expect(first.error).toBeNull();
    expect(reused.outOfFold).toEqual(first.outOfFold);
    expect(fresh.outOfFold).toEqual(first.outOfFold);
    expect(first.outOfFold?.length).toBe(foldTests[0].length);
  });

  it("returns a failed outcome naming the family and parameter for a bad value, instead of throwing", () => {
    const outcome = runFoldJob(createFoldContext(dataset, foldTests, metricByName("average_precision")), job("forest", { trees: 0 }));
    expect(outcome.score).toBeNull();
    expect(outcome.error).toMatch(/^forest\.trees: /);
  });

  it("refuses a fold that does not exist", () => {
    const outcome = runFoldJob(createFoldContext(dataset, foldTests, metricByName("average_precision")), job("tree", {}, 7));
    expect(outcome.error).toMatch(/fold 7 does not exist/);
  });
});
