import { type ChildProcess, spawn, spawnSync } from "node:child_process";
import { chmodSync, chownSync, closeSync, mkdirSync, openSync, readdirSync, readFileSync, rmSync, statSync, writeSync } from "node:fs";
import { createHash } from "node:crypto";
import { join, resolve } from "node:path";
import { RunStore } from "@nightshift/store";
import { afterEach, describe, expect, it } from "vitest";
import { CLI, type CliResult, nightshift, nightshiftAsync, storedFolds, SMALL_FAMILIES, tempDir, withoutTimings, writePlan, writeSmallTurbines } from "../e2e/helpers.js";
import { SOAK_FACTOR, soakCount, soakTimeout } from "./soak.js";

const PLAN = `name: disk-full
seed: 7
data: { train: turbines.csv, target: failed_within_30d, ignore: [turbine_id], holdout: 0.2 }
metric: average_precision
folds: { k: 3 }
budget: { trials: 8 }
${SMALL_FAMILIES}`;
const FOLD_JOBS = 8 * 3;

const SEARCH_ONLY = ["--workers", "1", "--search-only"];
/** A whole run: the search, then the final step (ensembles, refits, the hold-out's one opening, ensemble.json). */
const WHOLE = ["--workers", "1"];

/** The one line the command line prints when the disk refuses a write (StoreWriteError or a file-system errno). */
const DISK_LINE = /^nightshift: \S+: cannot write.*; the disk may be full or read-only\. What is already stored is kept; run the same command again to resume once the disk is writable\.\n$/;

interface Snapshot {
  readonly scores: ReturnType<RunStore["foldScores"]>;
  readonly predictions: Record<string, number[]>;
}

function snapshot(runDir: string): Snapshot {
  const store = RunStore.open(runDir, { readonly: true });
  try {
    const predictions: Record<string, number[]> = {};
    for (const t of store.trials()) for (const [fold, oof] of store.outOfFold(t.trial)) predictions[`${t.trial}/${fold}`] = Array.from(oof);
    return { scores: store.foldScores(), predictions };
  } finally {
    store.close();
  }
}

function readStore<T>(runDir: string, read: (store: RunStore) => T): T {
  const store = RunStore.open(runDir, { readonly: true });
  try {
    return read(store);
  } finally {
    store.close();
  }
}

/** The run's state and its hold-out record: how often it was opened, and the recorded opening. */
function holdoutRecord(runDir: string): { openings: number; openedAt: unknown } {
  return readStore(runDir, (store) => ({
    openings: store.events(0, 100_000).filter((e) => e.kind === "holdout_opened").length,
    openedAt: (store.artifact("holdout")?.data as { opened_at?: unknown } | undefined)?.opened_at,
  }));
}

/** sha256 of every file in a folder, by name. */
function fileHashes(folder: string): Record<string, string> {
  return Object.fromEntries(readdirSync(folder).sort().map((name) => [name, createHash("sha256").update(readFileSync(join(folder, name))).digest("hex")]));
}

/** ensemble.json without its creation time (the only field that differs between two runs of one plan). */
function exportedWithoutTime(runDir: string): unknown {
  const { created_at: _c, ...rest } = JSON.parse(readFileSync(join(runDir, "ensemble.json"), "utf8")) as Record<string, unknown>;
  return rest;
}

/** Writes zeros to `file` until the file system has no byte left (ENOSPC). */
function fillDisk(file: string): number {
  const fd = openSync(file, "w");
  let written = 0;
  try {
    for (let chunk = 1 << 20; chunk >= 1; ) {
      try {
        written += writeSync(fd, Buffer.alloc(chunk));
      } catch (error) {
        if ((error as NodeJS.ErrnoException).code !== "ENOSPC") throw error;
        chunk = chunk === 1 ? 0 : chunk >> 2;
      }
    }
  } finally {
    closeSync(fd);
  }
  return written;
}

function waitExit(child: ChildProcess): { exited: Promise<number | null>; stderr: () => string; done: () => boolean } {
  const chunks: Buffer[] = [];
  let finished = false;
  child.stderr?.on("data", (b: Buffer) => chunks.push(b));
  const exited = new Promise<number | null>((r) => child.on("exit", (code) => r(code)));
  void exited.then(() => {
    finished = true;
  });
  return { exited, stderr: () => Buffer.concat(chunks).toString(), done: () => finished };
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/**
 * A real small disk: a tmpfs of `size` mounted at `mountPoint` in a private user and mount namespace
 * (`unshare -Urm`, no privilege needed), kept alive by a holder process. Coordinators run inside it
 * (`nsenter` into the holder's namespaces); the test reaches the same files from outside through
 * `/proc/<holder>/root`. Full means ENOSPC from the kernel; read-only means `mount -o remount,ro` (EROFS).
 */
class SmallDisk {
  private constructor(
    readonly mountPoint: string,
    private readonly holder: ChildProcess,
  ) {}

  static async mount(mountPoint: string, size: string): Promise<SmallDisk> {
    mkdirSync(mountPoint, { recursive: true });
    const holder = spawn("unshare", ["-Urm", "sh", "-c", 'mount -t tmpfs -o size="$1" tmpfs "$0" && echo mounted && exec sleep 100000', mountPoint, size], { stdio: ["ignore", "pipe", "pipe"] });
    const said: string[] = [];
    await new Promise<void>((resolve, reject) => {
      holder.stdout?.on("data", (b: Buffer) => (said.push(b.toString()), said.join("").includes("mounted") && resolve()));
      holder.stderr?.on("data", (b: Buffer) => said.push(b.toString()));
      holder.on("exit", (code) => reject(new Error(`unshare -Urm could not mount a tmpfs (exit ${code}): ${said.join("")}`)));
      holder.on("error", reject);
    });
    return new SmallDisk(mountPoint, holder);
  }

  /** The path, inside the namespace, of a file on this disk. */
  inside(...parts: string[]): string {
    return join(this.mountPoint, ...parts);
  }

  /** The same file seen from the test's own namespace. */
  outside(...parts: string[]): string {
    return join(`/proc/${this.holder.pid}/root`, this.mountPoint, ...parts);
  }

  private enter(command: string[], cwd: string): [string, string[]] {
    return ["nsenter", ["-t", String(this.holder.pid), "-U", "-m", "--preserve-credentials", `--wd=${cwd}`, ...command]];
  }

  runAsync(args: string[], cwd: string): ChildProcess {
    const [file, argv] = this.enter([process.execPath, CLI, ...args], cwd);
    return spawn(file, argv, { cwd, stdio: ["ignore", "pipe", "pipe"], env: { ...process.env, NO_COLOR: "1" } });
  }

  run(args: string[], cwd: string): CliResult {
    const [file, argv] = this.enter([process.execPath, CLI, ...args], cwd);
    const r = spawnSync(file, argv, { cwd, encoding: "utf8", env: { ...process.env, NO_COLOR: "1" } });
    return { code: r.status, stdout: r.stdout, stderr: r.stderr };
  }

  /** What the disk tests check in a run store on this disk, read inside the namespace (see store-probe.mjs). */
  stored(runDir: string): Stored {
    const [file, argv] = this.enter([process.execPath, PROBE, runDir, "full"], REPO);
    const r = spawnSync(file, argv, { cwd: REPO, encoding: "utf8" });
    if (r.status !== 0) throw new Error(`store probe failed: ${r.stderr}`);
    return JSON.parse(r.stdout) as Stored;
  }

  /**
   * Waits, polling inside the namespace, until the store has `until` ("folds=6": at least 6 fold results;
   * "state=finished": the search has finished); false if `run` ended first.
   */
  async waitUntil(runDir: string, until: string, run: { exited: Promise<unknown> }): Promise<boolean> {
    const [file, argv] = this.enter([process.execPath, PROBE, runDir, until], REPO);
    const probe = spawn(file, argv, { cwd: REPO, stdio: ["ignore", "ignore", "inherit"] });
    const probed = new Promise<boolean>((r) => probe.on("exit", (code) => r(code === 0)));
    const reached = await Promise.race([probed, run.exited.then(() => false)]);
    probe.kill("SIGKILL");
    return reached;
  }

  remount(mode: "ro" | "rw"): void {
    const [file, argv] = this.enter(["mount", "-o", `remount,${mode}`, this.mountPoint], "/");
    const r = spawnSync(file, argv, { encoding: "utf8" });
    if (r.status !== 0) throw new Error(`remount,${mode} failed: ${r.stderr}`);
  }

  unmount(): void {
    this.holder.kill("SIGKILL");
  }
}

const REPO = resolve(__dirname, "../..");
const PROBE = join(__dirname, "store-probe.mjs");

interface Stored extends Snapshot {
  readonly integrity: string;
  /** How often the hold-out was opened (holdout_opened events), and the recorded opening time. */
  readonly openings: number;
  readonly openedAt?: unknown;
}

const disks: SmallDisk[] = [];
afterEach(() => {
  for (const disk of disks.splice(0)) disk.unmount();
});

/** A test folder with the plan and data, and the uninterrupted reference run of `args`. */
function setUp(prefix: string, args: string[]): { dir: string; planPath: string; reference: CliResult; referenceDir: string } {
  const dir = tempDir(prefix);
  writeSmallTurbines(dir);
  const planPath = writePlan(dir, PLAN);
  const referenceDir = join(dir, "whole");
  const reference = nightshift(["run", planPath, "--run-dir", referenceDir, ...args, "--json"], dir);
  expect(reference.stderr).toBe("");
  expect(reference.code).toBe(0);
  return { dir, planPath, reference, referenceDir };
}

/** A resume that ended cleanly with the board of the uninterrupted reference run (timings aside). */
function expectUninterrupted(resumed: CliResult, reference: CliResult): void {
  expect(resumed.stderr).toBe("");
  expect(resumed.code).toBe(0);
  expect(withoutTimings(JSON.parse(resumed.stdout))).toEqual(withoutTimings(JSON.parse(reference.stdout)));
}

/** A small disk, and a coordinator started on it in the folder `run`, stopped when the store has `until` (see waitUntil). */
async function runOnSmallDisk(prefix: string, args: string[], until: string) {
  const setup = setUp(prefix, args);
  const disk = await SmallDisk.mount(join(setup.dir, "disk"), "16m");
  disks.push(disk);
  const runDir = disk.inside("run");
  const child = disk.runAsync(["run", setup.planPath, "--run-dir", runDir, ...args, "--quiet"], setup.dir);
  const run = waitExit(child);
  const reached = await disk.waitUntil(runDir, until, run);
  expect(reached && !run.done(), `the run ended before its store had ${until}`).toBe(true);
  return { ...setup, disk, runDir, child, run };
}

/** When the disk fills: after at least this many committed fold results, or once the search has finished (in the final step). */
type FillMoment = { folds: number } | "final step";

// One moment in the search and one in the final step; under soak, more moments spread over the search
// (up to 16 of its 24 fold results, so that the fill lands before the search ends on a fast machine too).
const FILL_MOMENTS: FillMoment[] = [...Array.from({ length: soakCount(1) }, (_, i) => ({ folds: 6 + Math.floor((i * 10) / SOAK_FACTOR) })), "final step"];

describe("a real full disk mid-run (a small tmpfs)", () => {
  for (const moment of FILL_MOMENTS) {
    const when = moment === "final step" ? "in the final step" : `after ${moment.folds} fold results`;
    it(`filled ${when}: stops with one clear line, keeps what was stored, and resumes once space is back to the uninterrupted result`, async () => {
      const until = moment === "final step" ? "state=finished" : `folds=${moment.folds}`;
      const { dir, planPath, reference, referenceDir, disk, runDir, run } = await runOnSmallDisk("diskfull", WHOLE, until);
      const filler = disk.outside("filler");
      expect(fillDisk(filler)).toBeGreaterThan(0);
      const code = await run.exited;

      expect(code).toBe(1);
      expect(run.stderr()).toMatch(DISK_LINE);
      expect(run.stderr()).toMatch(/SQLITE_FULL|ENOSPC/);
      const stored = disk.stored(runDir);
      expect(stored.integrity).toBe("ok");
      if (moment !== "final step") {
        expect(stored.scores.length).toBeGreaterThanOrEqual(moment.folds);
        expect(stored.scores.length).toBeLessThan(FOLD_JOBS);
      }
      expect(stored.openings).toBeLessThanOrEqual(1);

      // Space is back: the same command, on the same disk.
      rmSync(filler);
      const resumed = disk.run(["run", planPath, "--run-dir", runDir, ...WHOLE, "--json"], dir);
      expectUninterrupted(resumed, reference);
      const after = disk.stored(runDir);
      for (const row of stored.scores) expect(after.scores).toContainEqual(row);
      for (const [key, oof] of Object.entries(stored.predictions)) expect(after.predictions[key]).toEqual(oof);
      expect(after.predictions).toEqual(snapshot(referenceDir).predictions);
      expect(exportedWithoutTime(disk.outside("run"))).toEqual(exportedWithoutTime(referenceDir));
      // The hold-out was opened once in all: a recorded opening is kept, not repeated.
      expect(after.openings).toBe(1);
      if (stored.openings === 1) expect(after.openedAt).toBe(stored.openedAt);
      expect(after.integrity).toBe("ok");
    }, soakTimeout(120_000));
  }
});

describe("a run folder on a disk remounted read-only", () => {
  it("refuses a resume (and a new run) with one clear line, changes nothing, and resumes once writable to the uninterrupted result", async () => {
    // A run stopped mid-search (killed: its write-ahead log still holds the last commits).
    const { dir, planPath, reference, referenceDir, disk, runDir, child, run } = await runOnSmallDisk("diskro", SEARCH_ONLY, "folds=6");
    child.kill("SIGKILL");
    await run.exited;
    const stored = disk.stored(runDir);
    const hashes = fileHashes(disk.outside("run"));

    // Linux refuses to remount read-only while a file on it is open for writing: the run is stopped first.
    disk.remount("ro");
    for (let attempt = 0; attempt < soakCount(1); attempt++) {
      const refused = disk.run(["run", planPath, "--run-dir", runDir, ...SEARCH_ONLY, "--quiet"], dir);
      expect(refused.code).toBe(1);
      expect(refused.stderr).toMatch(DISK_LINE);
      expect(refused.stderr).toContain(`${runDir}/run.sqlite: cannot write the run store (SQLITE_READONLY`);
      expect(fileHashes(disk.outside("run"))).toEqual(hashes);
    }
    const fresh = disk.run(["run", planPath, "--run-dir", disk.inside("other"), ...SEARCH_ONLY, "--quiet"], dir);
    expect(fresh.code).toBe(1);
    expect(fresh.stderr).toMatch(DISK_LINE);
    expect(fresh.stderr).toContain("(EROFS)");

    disk.remount("rw");
    const resumed = disk.run(["run", planPath, "--run-dir", runDir, ...SEARCH_ONLY, "--json"], dir);
    expectUninterrupted(resumed, reference);
    const after = disk.stored(runDir);
    for (const row of stored.scores) expect(after.scores).toContainEqual(row);
    expect(after.predictions).toEqual(snapshot(referenceDir).predictions);
    expect(after.integrity).toBe("ok");
  }, soakTimeout(90_000));
});

/** Runs the command line as an unprivileged user when the tests run as root (root writes into any folder whatever its mode). */
const NOBODY = 65534;
function asUser(args: string[]): string[] {
  return process.getuid?.() === 0 ? ["setpriv", `--reuid=${NOBODY}`, `--regid=${NOBODY}`, "--clear-groups", process.execPath, CLI, ...args] : [process.execPath, CLI, ...args];
}

describe("a run folder made read-only mid-run", () => {
  it("stops when the final step cannot write ensemble.json, opens the hold-out only once, and resumes once writable to the uninterrupted result", async () => {
    const { dir, planPath, reference, referenceDir } = setUp("dirro", WHOLE);
    chmodSync(dir, 0o755);
    const parent = join(dir, "runs");
    mkdirSync(parent);
    if (process.getuid?.() === 0) chownSync(parent, NOBODY, NOBODY);
    const runDir = join(parent, "run");
    const command = asUser(["run", planPath, "--run-dir", runDir, ...WHOLE, "--quiet"]);
    const child = spawn(command[0], command.slice(1), { cwd: dir, stdio: ["ignore", "pipe", "pipe"] });
    const run = waitExit(child);
    while (!run.done() && storedFolds(runDir) < 6) await sleep(10);
    expect(run.done()).toBe(false);
    // No new file can be made in the folder; the store's open files still take writes (the search goes on).
    chmodSync(runDir, 0o555);
    const code = await run.exited;

    expect(code).toBe(1);
    expect(run.stderr()).toMatch(DISK_LINE);
    expect(run.stderr()).toContain(`${runDir}/ensemble.json.tmp: cannot write (EACCES)`);
    expect(statSync(runDir).mode & 0o777).toBe(0o555);
    expect(readStore(runDir, (s) => s.integrityCheck())).toBe("ok");
    expect(snapshot(runDir).scores).toHaveLength(FOLD_JOBS);
    const opened = holdoutRecord(runDir);
    expect(opened.openings).toBe(1);

    chmodSync(runDir, 0o755);
    const again = asUser(["run", planPath, "--run-dir", runDir, ...WHOLE, "--json"]);
    const r = spawnSync(again[0], again.slice(1), { cwd: dir, encoding: "utf8", env: { ...process.env, NO_COLOR: "1" } });
    expectUninterrupted({ code: r.status, stdout: r.stdout, stderr: r.stderr }, reference);
    expect(holdoutRecord(runDir)).toEqual(opened);
    expect(exportedWithoutTime(runDir)).toEqual(exportedWithoutTime(referenceDir));
    expect(snapshot(runDir).predictions).toEqual(snapshot(referenceDir).predictions);
  }, soakTimeout(90_000));
});

/**
 * A file-size limit (RLIMIT_FSIZE, set on the running coordinator with util-linux `prlimit --pid`):
 * every write that grows a file past the limit fails with EFBIG (SQLITE_IOERR_WRITE in the store), as
 * under a per-file size limit or quota. A different refusal from the full disk above, handled the same way.
 */
describe("a file-size limit reached mid-run", () => {
  it("stops with one clear message, keeps what was stored intact, and resumes to the uninterrupted result", async () => {
    const { dir, planPath, reference, referenceDir } = setUp("fsize", SEARCH_ONLY);
    const runDir = join(dir, "full");
    const child = nightshiftAsync(["run", planPath, "--run-dir", runDir, ...SEARCH_ONLY, "--quiet"], dir);
    const run = waitExit(child);
    while (!run.done() && storedFolds(runDir) < 6) await sleep(15);
    expect(run.done()).toBe(false);
    const file = join(runDir, "run.sqlite");
    // The smaller of the two files' sizes: the next write that grows either file fails.
    const limit = Math.min(statSync(file).size, statSync(`${file}-wal`).size);
    const prlimit = spawnSync("prlimit", ["--pid", String(child.pid), `--fsize=${limit}:${limit}`], { encoding: "utf8" });
    expect(prlimit.stderr).toBe("");
    const code = await run.exited;

    expect(code).toBe(1);
    expect(run.stderr()).toMatch(DISK_LINE);
    expect(run.stderr()).toMatch(/run\.sqlite: cannot write the run store \(SQLITE_IOERR/);

    const stored = snapshot(runDir);
    expect(stored.scores.length).toBeGreaterThanOrEqual(6);
    expect(stored.scores.length).toBeLessThan(FOLD_JOBS);
    expect(readStore(runDir, (s) => s.integrityCheck())).toBe("ok");

    const resumed = nightshift(["run", planPath, "--run-dir", runDir, ...SEARCH_ONLY, "--json"], dir);
    expectUninterrupted(resumed, reference);
    const after = snapshot(runDir);
    for (const row of stored.scores) expect(after.scores).toContainEqual(row);
    for (const [key, oof] of Object.entries(stored.predictions)) expect(after.predictions[key]).toEqual(oof);
    expect(after.predictions).toEqual(snapshot(referenceDir).predictions);
  }, soakTimeout(60_000));
});
