// Runs every benchmark in bench/ one after another (after `npm run build`); each prints its own
// figures and ratios. Some call Debian's /usr/bin/python3 with scikit-learn / xgboost for the
// reference side. Pass names to run a subset: `npm run bench -- metrics trees`.
import { spawnSync } from "node:child_process";
import { readdirSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";

const here = dirname(fileURLToPath(import.meta.url));
const wanted = process.argv.slice(2);
const benches = readdirSync(here)
  .filter((name) => name.endsWith(".bench.ts"))
  .filter((name) => wanted.length === 0 || wanted.some((w) => name.startsWith(w)))
  .sort();
let failed = 0;
for (const name of benches) {
  console.log(`\n=== ${name}`);
  const result = spawnSync("npx", ["tsx", join(here, name)], { stdio: "inherit" });
  if (result.status !== 0) failed++;
}
process.exitCode = failed > 0 ? 1 : 0;
