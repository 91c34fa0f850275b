/**
 * How the dashboard copes with a large run in a browser: the run page of 5,000 trials × 5
 * folds (the store of bench/lib/large-run-store.ts) in headless Chromium, timed from
 * navigation until the board and the best-score chart are drawn, then a column sort and the
 * hyperparameter charts of one family. Reference in the same script: the same page for a run
 * of 50 trials, so the ratio is what the size of the run costs.
 * Needs Debian's chromium (`apt-get install chromium`) and playwright-core
 * (`npm i --no-save playwright-core@1.65.1`).
 * run: npm run build && npx tsx bench/dashboard.bench.ts
 */
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { startServer } from "../packages/server/src/http-server.js";
import { writeLargeRun } from "./lib/large-run-store.js";

interface Page {
  goto(url: string): Promise<unknown>;
  waitForSelector(selector: string): Promise<unknown>;
  waitForFunction(fn: string, arg?: unknown, options?: { timeout: number }): Promise<unknown>;
  selectOption(selector: string, value: string): Promise<unknown>;
  click(selector: string): Promise<unknown>;
}
interface Browser {
  newPage(options: { viewport: { width: number; height: number } }): Promise<Page>;
  close(): Promise<void>;
}
const { chromium } = (await import("playwright-core")) as unknown as { chromium: { launch(options: { executablePath: string; args: string[] }): Promise<Browser> } };

const largeDir = mkdtempSync(join(tmpdir(), "nightshift-bench-dashboard-"));
writeLargeRun(largeDir, 5000);
const smallDir = mkdtempSync(join(tmpdir(), "nightshift-bench-dashboard-small-"));
writeLargeRun(smallDir, 50);

const browser = await chromium.launch({ executablePath: "/usr/bin/chromium", args: ["--headless", "--no-sandbox", "--disable-gpu", "--no-first-run", "--disable-background-networking"] });

async function measure(runsDir: string): Promise<{ page: number; sort: number; params: number }> {
  const { app, url } = await startServer({ runsDir, host: "127.0.0.1", port: 0 });
  try {
    const page = await browser.newPage({ viewport: { width: 1360, height: 900 } });
    let start = performance.now();
    await page.goto(`${url}#/runs/large-run`);
    await page.waitForSelector("table.board tbody tr");
    await page.waitForFunction("document.querySelectorAll('.chart.vega-embed').length >= 2", undefined, { timeout: 60_000 });
    const ready = performance.now() - start;
    start = performance.now();
    await page.click('th.sortable:has-text("fit s")');
    await page.waitForFunction("document.querySelector('th.active')?.textContent?.includes('fit s')", undefined, { timeout: 60_000 });
    const sort = performance.now() - start;
    start = performance.now();
    await page.selectOption('select[aria-label="family of the hyperparameter charts"]', "forest");
    await page.waitForSelector('[data-family="forest"] canvas, [data-family="forest"] svg');
    const params = performance.now() - start;
    return { page: ready, sort, params };
  } finally {
    await app.close();
  }
}

const small = await measure(smallDir);
const large = await measure(largeDir);
await browser.close();
rmSync(largeDir, { recursive: true, force: true });
rmSync(smallDir, { recursive: true, force: true });
const line = (name: string, s: number, l: number) => console.log(`${name.padEnd(34)} 50 trials ${s.toFixed(0).padStart(5)} ms   5,000 trials ${l.toFixed(0).padStart(5)} ms   ratio ${(l / s).toFixed(2)}`);
line("run page drawn (board + chart)", small.page, large.page);
line("sort the board by fit time", small.sort, large.sort);
line("hyperparameter charts of a family", small.params, large.params);
