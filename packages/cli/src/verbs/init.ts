import { existsSync, writeFileSync } from "node:fs";
import { basename, dirname, relative, resolve } from "node:path";
import { InputError, readCsvDataset } from "@nightshift/core";
import { parseVerbArgs } from "../args.js";
import type { Verb } from "../commands.js";
import { defaultFamiliesYaml, proposedMetric } from "../default-plan.js";

export const initVerb: Verb = {
  name: "init",
  usage: "init <rows.csv> --target COL [--out F]",
  summary: "write a plan with the task, metric, folds and search space inferred",
  async run(args) {
    const { values, positionals } = parseVerbArgs(
      "init",
      args,
      { target: { type: "string" }, out: { type: "string" }, force: { type: "boolean", default: false } },
      { min: 1, max: 1, names: "one CSV file: nightshift init <rows.csv> --target COL" },
    );
    if (!values.target) throw new InputError("nightshift init", "--target COL is required: the column to predict");
    const csvPath = positionals[0];
    const name = basename(csvPath).replace(/\.[^.]*$/, "").replace(/[^A-Za-z0-9_.-]+/g, "-").replace(/^[^A-Za-z0-9]+/, "") || "plan";
    const out = values.out ?? `${name}.plan.yaml`;
    if (existsSync(out) && !values.force) throw new InputError(out, "already exists; choose another --out or pass --force to replace it");
    const dataset = await readCsvDataset(csvPath, { target: values.target });
    // Columns whose every value differs (row ids, timestamps as text) carry no pattern a model can reuse.
    const idLike = dataset.features.filter((c) => c.kind === "categorical" && c.vocabulary.length >= 0.9 * dataset.rowCount).map((c) => c.name);
    const { metric, why } = proposedMetric(dataset);
    const target = dataset.target;
    const classes =
      target.kind === "classes"
        ? target.labels
            .map((label, code) => {
              let n = 0;
              for (let i = 0; i < target.codes.length; i++) if (target.codes[i] === code) n++;
              return `${label} ${((n / target.codes.length) * 100).toFixed(1)}%`;
            })
            .join(", ")
        : "";
    const trainPath = relative(dirname(resolve(out)), resolve(csvPath)) || basename(csvPath);
    const text = `# nightshift plan written by 'nightshift init' from ${csvPath}.
# ${dataset.rowCount} rows, ${dataset.features.length} feature columns; task inferred: ${dataset.task}${classes ? ` (${classes})` : ""}.
name: ${name}
seed: 42
data:
  train: ${JSON.stringify(trainPath)}   # relative to this plan file
  target: ${JSON.stringify(values.target)}
  ignore: ${JSON.stringify(idLike)}   # columns that must not be features (identifiers, leaks)${idLike.length ? "; these look like identifiers" : ""}
  holdout: 0.2                 # share of rows sealed until the final step, scored once
task: ${dataset.task}
metric: ${metric}   # ${why}
folds: { k: 5, repeats: 1, stratify: ${dataset.task !== "regression"} }
budget: { trials: 200, hours: 8, trial_minutes: 20 }
halving: { eta: 3 }            # drop the worse two thirds of each batch after their first fold
${defaultFamiliesYaml(dataset.task, dataset.rowCount)}
ensemble: { selection: { rounds: 50, candidates: 50 }, stacking: { top: 20 }, voting: { top: 10 } }
`;
    writeFileSync(out, text);
    console.log(`nightshift: wrote ${out} (task ${dataset.task}, metric ${metric}). Check it, then: nightshift run ${out}`);
    return 0;
  },
};
