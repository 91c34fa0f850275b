import { spawnSync } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { stringify } from "csv-stringify/sync";
import { generateTurbineRows, TURBINE_COLUMNS } from "../../cli/src/demo/turbine-data.js";

export const CLI = resolve(__dirname, "../../cli/bin/nightshift.js");

export interface RunFixture {
  /** The folder holding the run folder. */
  readonly runsDir: string;
  /** The run folder's name: its id in URLs. */
  readonly id: string;
  readonly folder: string;
}

export function tempDir(prefix: string): string {
  return mkdtempSync(join(tmpdir(), `nightshift-server-${prefix}-`));
}

/**
 * A real short search on the small turbine set (invented demo data), run by the command line
 * into `<tmp>/runs/<id>`: three families, 3-fold cross-validation, halving, a 20% hold-out.
 */
export function runShortSearch(id = "turbines-short", trials = 9): RunFixture {
  const dir = tempDir("fixture");
  writeFileSync(join(dir, "turbines.csv"), stringify(generateTurbineRows({ turbines: 60, weeks: 20, seed: 11 }), { header: true, columns: [...TURBINE_COLUMNS] }));
  writeFileSync(
    join(dir, "short.plan.yaml"),
    `name: short
seed: 7
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: 3 }
budget: { trials: ${trials} }
halving: { eta: 3 }
families:
  logistic: { l2: { log_uniform: [1.0e-3, 10] } }
  tree: { depth: { int: [2, 6] } }
  boosted: { rounds: { int: [10, 30] }, learning_rate: 0.2, leaves: 8, min_leaf: 5 }
`,
  );
  const runsDir = join(dir, "runs");
  const folder = join(runsDir, id);
  const r = spawnSync(process.execPath, [CLI, "run", "short.plan.yaml", "--run-dir", folder, "--quiet", "--search-only"], { cwd: dir, encoding: "utf8" });
  if (r.status !== 0) throw new Error(`the fixture run failed (${r.status}): ${r.stderr}`);
  return { runsDir, id, folder };
}
