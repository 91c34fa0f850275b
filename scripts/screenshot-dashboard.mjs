// Opens the dashboard of a finished run in headless Chromium, checks what a user sees, and saves
// screenshots. Not part of the tests: it needs Debian's chromium (`apt-get install chromium`) and
// playwright-core (`npm i --no-save playwright-core@1.65.1`).
//
//   node scripts/screenshot-dashboard.mjs [--runs DIR] [--out test-output/screenshots]
//
// Without --runs it runs a short search on the small turbine set (invented demo data) first, and
// then watches a second, longer one update live.
import { spawn, spawnSync } from "node:child_process";
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { parseArgs } from "node:util";

const root = resolve(new URL("..", import.meta.url).pathname);
const { values } = parseArgs({ options: { runs: { type: "string" }, out: { type: "string", default: "test-output/screenshots" } } });
const out = resolve(values.out);
mkdirSync(out, { recursive: true });

function smallRun() {
  const dir = mkdtempSync(join(tmpdir(), "nightshift-shots-"));
  const script = `
    import { writeFileSync } from "node:fs";
    import { stringify } from "csv-stringify/sync";
    import { generateTurbineRows, TURBINE_COLUMNS } from "${root}/packages/cli/dist/demo/turbine-data.js";
    writeFileSync("${dir}/turbines.csv", stringify(generateTurbineRows({ turbines: 120, weeks: 20, seed: 11 }), { header: true, columns: [...TURBINE_COLUMNS] }));`;
  const made = spawnSync(process.execPath, ["--input-type=module", "-e", script], { cwd: root, stdio: "inherit" });
  if (made.status !== 0) process.exit(1);
  writeFileSync(
    join(dir, "shots.plan.yaml"),
    `name: turbine-shots
seed: 5
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: 4 }
budget: { trials: 18 }
families:
  logistic: { l2: { log_uniform: [1.0e-3, 10] } }
  tree: { depth: { int: [2, 6] }, min_leaf: { int: [1, 20] } }
  forest: { trees: { int: [5, 20] }, depth: { choice: [4, 8] } }
  boosted: { rounds: { int: [10, 40] }, learning_rate: { log_uniform: [0.05, 0.3] }, leaves: 8, min_leaf: 5 }
`,
  );
  const run = spawnSync(process.execPath, [CLI, "run", "shots.plan.yaml", "--run-dir", "runs/turbine-shots", "--quiet"], { cwd: dir, stdio: "inherit" });
  if (run.status !== 0) process.exit(1);
  return dir;
}

const CLI = join(root, "packages/cli/bin/nightshift.js");
const workDir = values.runs ? null : smallRun();
const runsDir = values.runs ? resolve(values.runs) : join(workDir, "runs");
const { renderReport, startServer } = await import(join(root, "packages/server/dist/index.js"));
const { chromium } = await import("playwright-core");
const { app, url } = await startServer({ runsDir, host: "127.0.0.1", port: 0 });
const browser = await chromium.launch({
  executablePath: "/usr/bin/chromium",
  args: ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync"],
});
const failures = [];
const check = (ok, what) => {
  console.log(`${ok ? "ok  " : "FAIL"} ${what}`);
  if (!ok) failures.push(what);
};
try {
  const page = await browser.newPage({ viewport: { width: 1360, height: 900 } });
  const offHost = [];
  page.on("request", (request) => {
    if (!request.url().startsWith(url)) offHost.push(request.url());
  });
  page.on("pageerror", (error) => failures.push(`page error: ${error.message}`));

  await page.goto(url);
  await page.waitForSelector("tr[data-run]");
  await page.screenshot({ path: join(out, "runs.png") });
  const runId = await page.getAttribute("tr[data-run]", "data-run");

  await page.goto(`${url}#/runs/${encodeURIComponent(runId)}`);
  await page.waitForSelector("table.board tbody tr");
  await page.waitForSelector(".panel .vega-embed svg");
  const board = await (await fetch(`${url}api/runs/${encodeURIComponent(runId)}/board?limit=50`)).json();
  const shown = await page.locator("table.board tbody tr").count();
  check(shown === Math.min(50, board.total), `the board shows ${shown} rows (the run has ${board.total} trials)`);
  const firstTrial = await page.getAttribute("table.board tbody tr:first-child", "data-trial");
  check(Number(firstTrial) === board.rows[0].trial, `the best trial (#${board.rows[0].trial}) is first`);
  await page.waitForTimeout(300);
  await page.screenshot({ path: join(out, "run.png"), fullPage: true });

  await page.click("table.board tbody tr:first-child");
  await page.waitForSelector(".confusion-box svg");
  await page.waitForSelector("p.rates");
  const before = await page.textContent("p.rates");
  await page.locator('input[type="range"]').fill("0.15");
  await page.waitForFunction((previous) => document.querySelector("p.rates")?.textContent !== previous, before, { timeout: 5000 });
  const after = await page.textContent("p.rates");
  check(before !== after, `moving the threshold changes the confusion matrix (${before} → ${after})`);
  await page.waitForTimeout(300);
  await page.screenshot({ path: join(out, "trial.png"), fullPage: true });
  check(offHost.length === 0, `no request leaves the server (${offHost.length} did${offHost.length ? `: ${offHost.slice(0, 3).join(", ")}` : ""})`);


  if (workDir) {
    // A run that is still going: its page must follow it through server-sent events, without reloading.
    writeFileSync(join(workDir, "live.plan.yaml"), readFileSync(join(workDir, "shots.plan.yaml"), "utf8").replace("name: turbine-shots", "name: turbine-live").replace("trials: 18", "trials: 400"));
    const live = spawn(process.execPath, [CLI, "run", "live.plan.yaml", "--run-dir", "runs/turbine-live", "--quiet", "--workers", "1"], { cwd: workDir, stdio: "ignore" });
    try {
      for (let i = 0; i < 200; i++) {
        const r = await fetch(`${url}api/runs/turbine-live`);
        if (r.ok && (await r.json()).progress.folds_done > 0) break;
        await new Promise((wake) => setTimeout(wake, 100));
      }
      await page.goto(`${url}#/runs/turbine-live`);
      await page.waitForSelector("table.board tbody tr");
      const doneCells = () => page.locator("table.board .status-done").count();
      const before = await doneCells();
      await page.waitForFunction((n) => document.querySelectorAll("table.board .status-done").length > n, before, { timeout: 60_000 });
      check((await doneCells()) > before, `a running run's page updates by itself (${before} → ${await doneCells()} finished trials on the first page)`);
      check(await page.locator("#live.on").count() === 1, "the page shows it is following the run live");
      await page.screenshot({ path: join(out, "live.png"), fullPage: true });
    } finally {
      if (live.exitCode === null && live.signalCode === null) {
        const exited = new Promise((done) => live.on("exit", done));
        live.kill("SIGINT");
        await exited;
      }
    }
  }

  const reportFile = join(out, "report.html");
  writeFileSync(reportFile, await renderReport(join(runsDir, runId)));
  const reportPage = await browser.newPage({ viewport: { width: 1200, height: 900 } });
  const requests = [];
  reportPage.on("request", (request) => requests.push(request.url()));
  await reportPage.goto(`file://${reportFile}`);
  await reportPage.screenshot({ path: join(out, "report.png"), fullPage: true });
  const extra = requests.filter((r) => r !== `file://${reportFile}`);
  check(extra.length === 0, `the report opens with no request beyond its own file (${extra.length} more)`);
} finally {
  await browser.close();
  await app.close();
}
console.log(`screenshots in ${out}`);
if (failures.length > 0) {
  console.error(failures.join("\n"));
  process.exit(1);
}
