/**
 * CSV ingest benchmark: 1,000,000 rows × 30 numeric features (+ a 0/1 label), read with
 * readCsvDataset, against a plain papaparse pass over the same file that does nothing with
 * its records (the parser's own ceiling). Targets: ≥ 40 MB/s, and peak RSS ≤ 3× the packed
 * dataset size.
 *
 *   npm run build && npx tsx bench/ingest.bench.ts [rows]
 *
 * The CSV is generated once into bench/out/ and reused. Each measurement runs in a fresh
 * child process, so its peak RSS (process.resourceUsage().maxRSS) is its own; each is run
 * twice, alternating, and the faster run is reported. Speeds are given per wall-clock
 * second and per CPU second of the process (user + system): on a shared machine the CPU
 * figure is the one that does not depend on what else is running.
 */
import { fork } from "node:child_process";
import { createReadStream, createWriteStream, existsSync, mkdirSync, renameSync, statSync } from "node:fs";
import { cpus, loadavg } from "node:os";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import Papa from "papaparse";
import { createRng, packDataset, readCsvDataset } from "@nightshift/core";

const FEATURES = 30;
const here = dirname(fileURLToPath(import.meta.url));

interface Measurement {
  seconds: number;
  cpuSeconds: number;
  maxRssMB: number;
  records?: number;
  packedMB?: number;
  packSeconds?: number;
}

async function generate(path: string, rows: number): Promise<void> {
  if (existsSync(path)) return;
  mkdirSync(dirname(path), { recursive: true });
  const rng = createRng("bench", "ingest", rows);
  // Columns of different scales and precisions, like measured data.
  const scale = Array.from({ length: FEATURES }, (_, c) => 10 ** ((c % 7) - 2));
  const decimals = Array.from({ length: FEATURES }, (_, c) => 2 + (c % 5));
  const partial = `${path}.partial`;
  const out = createWriteStream(partial);
  const header = [...Array.from({ length: FEATURES }, (_, c) => `f${c}`), "label"].join(",");
  let chunk = `${header}\n`;
  for (let r = 0; r < rows; r++) {
    let line = "";
    let sum = 0;
    for (let c = 0; c < FEATURES; c++) {
      const z = rng.normal();
      sum += c < 5 ? z : 0;
      line += (z * scale[c]).toFixed(decimals[c]) + ",";
    }
    chunk += `${line}${sum + rng.normal() > 0 ? 1 : 0}\n`;
    if (chunk.length > 1 << 20) {
      if (!out.write(chunk)) await new Promise<void>((resolve) => out.once("drain", () => resolve()));
      chunk = "";
    }
  }
  out.end(chunk);
  await new Promise<void>((resolve, reject) => out.on("finish", () => resolve()).on("error", reject));
  renameSync(partial, path);
}

async function measureChild(mode: "ingest" | "parse", path: string): Promise<Measurement> {
  const child = fork(fileURLToPath(import.meta.url), ["--child", mode, path], { execArgv: process.execArgv });
  return new Promise((resolve, reject) => {
    child.on("message", (message) => resolve(message as Measurement));
    child.on("error", reject);
    child.on("exit", (code) => (code === 0 ? undefined : reject(new Error(`${mode} child exited with ${code}`))));
  });
}

async function childMain(mode: string, path: string): Promise<void> {
  const start = performance.now();
  const cpuStart = process.cpuUsage();
  const cpuSeconds = (): number => {
    const used = process.cpuUsage(cpuStart);
    return (used.user + used.system) / 1e6;
  };
  let result: Measurement;
  if (mode === "parse") {
    let records = 0;
    // The settings and read size of csv/csv-records.ts.
    const input = createReadStream(path, { encoding: "utf8", highWaterMark: 1 << 16 });
    await new Promise<void>((resolve, reject) => {
      Papa.parse<string[], typeof input>(input, {
        delimiter: ",",
        newline: "\n",
        header: false,
        dynamicTyping: false,
        skipEmptyLines: false,
        step: () => void records++,
        complete: () => resolve(),
        error: reject,
      });
    });
    result = { seconds: (performance.now() - start) / 1000, cpuSeconds: cpuSeconds(), maxRssMB: process.resourceUsage().maxRSS / 1024, records };
  } else {
    const dataset = await readCsvDataset(path, { target: "label" });
    const seconds = (performance.now() - start) / 1000;
    const cpu = cpuSeconds();
    const maxRssMB = process.resourceUsage().maxRSS / 1024;
    const packStart = performance.now();
    const packed = packDataset(dataset);
    result = {
      seconds,
      cpuSeconds: cpu,
      maxRssMB,
      records: dataset.rowCount,
      packedMB: packed.byteLength / 1e6,
      packSeconds: (performance.now() - packStart) / 1000,
    };
  }
  process.send!(result);
}

async function main(): Promise<void> {
  const rows = Number(process.argv[2] ?? 1_000_000);
  const path = join(here, "out", `ingest-${rows}x${FEATURES}.csv`);
  const generateStart = performance.now();
  await generate(path, rows);
  const generated = (performance.now() - generateStart) / 1000;
  const fileMB = statSync(path).size / 1e6;
  console.log(`file: ${path} (${fileMB.toFixed(1)} MB${generated > 1 ? `, generated in ${generated.toFixed(1)} s` : ", reused"})`);

  const parseRuns: Measurement[] = [];
  const ingestRuns: Measurement[] = [];
  for (let run = 0; run < 2; run++) {
    parseRuns.push(await measureChild("parse", path));
    ingestRuns.push(await measureChild("ingest", path));
  }
  const fastest = (runs: Measurement[]): Measurement => runs.reduce((a, b) => (b.seconds < a.seconds ? b : a));
  const leastCpu = (runs: Measurement[]): number => Math.min(...runs.map((run) => run.cpuSeconds));
  const plain = fastest(parseRuns);
  const ingest = fastest(ingestRuns);
  const plainRate = fileMB / plain.seconds;
  const ingestRate = fileMB / ingest.seconds;
  const plainCpuRate = fileMB / leastCpu(parseRuns);
  const ingestCpuRate = fileMB / leastCpu(ingestRuns);
  const peak = Math.max(...ingestRuns.map((run) => run.maxRssMB));
  const packedMB = ingest.packedMB!;
  const rate = (wall: number, cpu: number): string => `${wall.toFixed(1)} MB/s wall-clock, ${cpu.toFixed(1)} MB/s per CPU second`;
  console.log(`papaparse alone (records discarded): ${rate(plainRate, plainCpuRate)}, peak RSS ${plain.maxRssMB.toFixed(0)} MB`);
  console.log(`readCsvDataset:                       ${rate(ingestRate, ingestCpuRate)}, peak RSS ${peak.toFixed(0)} MB`);
  console.log(`ingest speed / papaparse speed: ${(ingestRate / plainRate).toFixed(2)} wall-clock, ${(ingestCpuRate / plainCpuRate).toFixed(2)} CPU`);
  console.log(`packed dataset: ${packedMB.toFixed(1)} MB (packed in ${ingest.packSeconds!.toFixed(2)} s); peak RSS / packed size: ${(peak / packedMB).toFixed(2)} (target ≤ 3)`);
  const verdict = (speed: number): string => (speed >= 40 ? "met" : "NOT met");
  console.log(
    `target ≥ 40 MB/s: ${verdict(ingestCpuRate)} per CPU second, ${verdict(ingestRate)} wall-clock; papaparse alone reaches ${Math.max(plainRate, plainCpuRate).toFixed(1)} MB/s`,
  );
  const list = (runs: Measurement[]): string => runs.map((r) => `${r.seconds.toFixed(2)} (cpu ${r.cpuSeconds.toFixed(2)})`).join(", ");
  console.log(`runs, seconds: papaparse ${list(parseRuns)}; ingest ${list(ingestRuns)}`);
  console.log(`load average at the end: ${loadavg().map((l) => l.toFixed(2)).join(" ")} on ${cpus().length} CPUs`);
}

if (process.argv[2] === "--child") await childMain(process.argv[3], process.argv[4]);
else await main();
