import { existsSync, mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { stringify } from "csv-stringify/sync";
import { parseVerbArgs, positiveInteger } from "../args.js";
import type { Verb } from "../commands.js";
import { defaultFamiliesYaml } from "../default-plan.js";
import { generateTurbineRows, TURBINE_COLUMNS } from "../demo/turbine-data.js";
import { runAndReport } from "./run.js";

export const DEMO_PLAN = "configs/demo.plan.yaml";
export const DEMO_DATA = "data/turbines.csv";

function demoPlan(trials: number): string {
  return `# The demo: predictive maintenance of wind turbines (invented data, made by 'nightshift demo').
# Which turbine-weeks are followed by a gearbox failure within 30 days? About 3% are.
name: turbine-gearbox
seed: 42
data: { train: ../${DEMO_DATA}, target: failed_within_30d, ignore: [turbine_id, week], holdout: 0.2 }
task: binary
metric: average_precision     # rare failures: accuracy would reward predicting 'never fails'
folds: { k: 5, repeats: 1, stratify: true }
budget: { trials: ${trials}, hours: 1, trial_minutes: 10 }
halving: { eta: 3 }
${defaultFamiliesYaml("binary", 20_000)}
ensemble: { selection: { rounds: 50, candidates: 30 }, stacking: { top: 10 }, voting: { top: 10 } }
`;
}

export const demoVerb: Verb = {
  name: "demo",
  usage: "demo [--runs DIR] [--trials N] [--workers N]",
  summary: "make the turbine demo data, run a short local search, print the board",
  async run(args) {
    const { values } = parseVerbArgs(
      "demo",
      args,
      { runs: { type: "string" }, trials: { type: "string" }, workers: { type: "string" }, json: { type: "boolean", default: false }, quiet: { type: "boolean", default: false } },
      { min: 0, max: 0, names: "no file arguments" },
    );
    const trials = positiveInteger("demo", "trials", values.trials);
    if (!existsSync(DEMO_DATA)) {
      mkdirSync("data", { recursive: true });
      const rows = generateTurbineRows({ turbines: 400, weeks: 50, seed: 2026 });
      writeFileSync(DEMO_DATA, stringify(rows, { header: true, columns: [...TURBINE_COLUMNS] }));
      console.error(`nightshift: wrote ${DEMO_DATA} (${rows.length} turbine-weeks)`);
    }
    let planPath = DEMO_PLAN;
    if (trials !== undefined) {
      planPath = join("configs", `demo-${trials}.plan.yaml`);
      mkdirSync("configs", { recursive: true });
      writeFileSync(planPath, demoPlan(trials));
    } else if (!existsSync(DEMO_PLAN)) {
      mkdirSync("configs", { recursive: true });
      writeFileSync(DEMO_PLAN, demoPlan(60));
      console.error(`nightshift: wrote ${DEMO_PLAN}`);
    }
    return runAndReport({
      planPath,
      runsDir: values.runs ?? "runs",
      workers: positiveInteger("demo", "workers", values.workers),
      json: values.json ?? false,
      quiet: values.quiet ?? false,
      top: values.json ? undefined : 25,
    });
  },
};
