import { allRows, createRng, type Dataset, JobSchema, JOB_SCHEMA_VERSION, metricByName, NODE_MAJOR, RefitResultSchema, RESULT_SCHEMA_VERSION } from "@nightshift/core";
import { learnerFor, type ModelJson } from "@nightshift/learners";
import { describe, expect, it } from "vitest";
import { createFoldContext } from "../src/fold-context.js";
import { acceptJob } from "../src/redis/accept-job.js";
import { isRefitOutcome, runJob } from "../src/run-job.js";

function dataset(rows: number): Dataset {
  const rng = createRng("run-job-test");
  const x = Float32Array.from({ length: rows }, () => rng.normal());
  const codes = Int32Array.from(x, (v) => (v + 0.5 * rng.normal() > 0 ? 1 : 0));
  return {
    source: "test",
    task: "binary",
    features: [{ name: "x", kind: "numeric", values: x }],
    target: { name: "y", kind: "classes", codes, labels: ["no", "yes"] },
    rowCount: rows,
    droppedRows: 0,
    fingerprint: "0".repeat(64),
  };
}

const base = { schema: JOB_SCHEMA_VERSION, node: NODE_MAJOR, run: "r", dataset: "0".repeat(64), seed: 3, trial: 4, family: "tree", params: { depth: 3 }, timeoutSeconds: null } as const;

describe("one job schema, one dispatch", () => {
  it("accepts fold jobs with or without their kind and refit jobs, and names a bad field under its kind", () => {
    expect(JobSchema.parse({ ...base, fold: 1 }).kind).toBeUndefined();
    expect(JobSchema.parse({ ...base, kind: "fold", fold: 1 }).kind).toBe("fold");
    expect(JobSchema.parse({ ...base, kind: "refit" }).kind).toBe("refit");
    expect(JobSchema.safeParse({ ...base, kind: "refit", fold: 1 }).success).toBe(false);
    expect(JobSchema.safeParse({ ...base, kind: "evaluate" }).success).toBe(false);
    expect(() => acceptJob({ ...base, kind: "refit", family: "mystery" })).toThrow(/family/);
  });

  it("runs a refit on every training row: the model predicts as the same fit made directly, from (seed, trial) alone", () => {
    const data = dataset(300);
    const context = createFoldContext(data, [allRows(150), Uint32Array.from({ length: 150 }, (_, i) => 150 + i)], metricByName("average_precision"));
    const outcome = runJob(context, { ...base, kind: "refit" });
    if (!isRefitOutcome(outcome) || outcome.model === null) throw new Error(`no model: ${JSON.stringify(outcome)}`);
    const learner = learnerFor("tree");
    const direct = learner.fit({ columns: data.features, rows: allRows(300), task: "binary", target: data.target }, learner.parseParams({ depth: 3 }), createRng(3, "trial", 4, "refit"));
    const view = { columns: data.features, rows: allRows(300) };
    expect(Array.from(learner.predict(learner.fromJSON(outcome.model as ModelJson), view))).toEqual(Array.from(learner.predict(direct, view)));
    // What a queue worker sends back for it passes the coordinator's schema.
    expect(RefitResultSchema.safeParse({ schema: RESULT_SCHEMA_VERSION, kind: "refit", trial: 4, model: outcome.model, fitSeconds: outcome.fitSeconds, error: null, worker: "w" }).success).toBe(true);

    const fold = runJob(context, { ...base, kind: "fold", fold: 0 });
    expect(isRefitOutcome(fold)).toBe(false);
    expect(fold.outOfFold?.length).toBe(150);
  });
});
