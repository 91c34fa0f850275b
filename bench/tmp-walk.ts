import { createRng } from "@nightshift/core";
import { boostedLearner } from "../packages/learners/src/index.js";
import { addTreeScores } from "../packages/learners/src/boosted/predict.js";
import { loadHypercube, trainViewOf } from "./lib/hypercube.js";
const PARAMS = boostedLearner.params.parse({ rounds: 200, learning_rate: 0.1, depth: 6, leaves: 64, l2: 1, min_hessian: 1, min_leaf: 1 });
const set = loadHypercube();
const model = boostedLearner.fit(trainViewOf(set), PARAMS, createRng("bench", 1)) as any;
const view = { columns: set.columns, rows: set.test };
for (const engine of ["webassembly", "javascript", "webassembly", "javascript"] as const) {
  let best = Infinity;
  for (let i = 0; i < 7; i++) {
    const raw = new Float64Array(set.test.length);
    const c0 = process.cpuUsage();
    addTreeScores(model.compiled, model.mapper, view, 1, raw, engine);
    const c = process.cpuUsage(c0);
    best = Math.min(best, (c.user + c.system) / 1e6);
  }
  console.log(engine, (set.test.length / best / 1e6).toFixed(3), "M rows/s");
}
const a = new Float64Array(set.test.length), b = new Float64Array(set.test.length);
addTreeScores(model.compiled, model.mapper, view, 1, a, "webassembly");
addTreeScores(model.compiled, model.mapper, view, 1, b, "javascript");
let diff = 0; for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) diff++;
console.log("differing", diff);
