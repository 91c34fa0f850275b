import { existsSync, mkdirSync } from "node:fs";
import { dirname, join } from "node:path";
import Database from "better-sqlite3";

/** Status of a trial on the board (DESIGN.md, machine-readable output). */
export type TrialStatus = "queued" | "running" | "done" | "pruned" | "failed" | "timed_out";

export interface TrialRecord {
  readonly trial: number;
  readonly family: string;
  readonly params: Record<string, unknown>;
  readonly status: TrialStatus;
  readonly message: string | null;
}

/** One fold job's outcome. `score`/`outOfFold` are null when the fit failed or timed out. */
export interface FoldResultRecord {
  readonly trial: number;
  readonly fold: number;
  readonly score: number | null;
  readonly fitSeconds: number;
  readonly predictSeconds: number;
  /** Row-major predictions for the fold's test rows (width = classes, or 1). */
  readonly outOfFold: Float32Array | null;
  readonly error: string | null;
}

export interface HalvingDecision {
  readonly batch: number;
  readonly rung: number;
  readonly trial: number;
  readonly score: number | null;
  readonly promoted: boolean;
}

export interface StoredEvent {
  readonly id: number;
  readonly at: string;
  readonly kind: string;
  readonly data: Record<string, unknown>;
}

const SCHEMA = `
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS trials (
  trial INTEGER PRIMARY KEY, family TEXT NOT NULL, params TEXT NOT NULL,
  status TEXT NOT NULL DEFAULT 'queued', message TEXT);
CREATE TABLE IF NOT EXISTS folds (
  fold INTEGER PRIMARY KEY, repeat INTEGER NOT NULL, idx INTEGER NOT NULL, test_rows BLOB NOT NULL);
CREATE TABLE IF NOT EXISTS fold_results (
  trial INTEGER NOT NULL, fold INTEGER NOT NULL, score REAL, fit_s REAL NOT NULL, predict_s REAL NOT NULL,
  oof BLOB, error TEXT, committed_at TEXT NOT NULL, PRIMARY KEY (trial, fold));
CREATE TABLE IF NOT EXISTS halving (
  batch INTEGER NOT NULL, rung INTEGER NOT NULL, trial INTEGER NOT NULL, score REAL, promoted INTEGER NOT NULL,
  PRIMARY KEY (batch, rung, trial));
CREATE TABLE IF NOT EXISTS events (id INTEGER PRIMARY KEY AUTOINCREMENT, at TEXT NOT NULL, kind TEXT NOT NULL, data TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS artifacts (name TEXT PRIMARY KEY, kind TEXT NOT NULL, data TEXT NOT NULL, created_at TEXT NOT NULL);
`;

export const STORE_FILE = "run.sqlite";

/** SQLite result codes that mean the file system refused a write (full, read-only, failing, vanished). */
const DISK_CODES = /^SQLITE_(FULL|IOERR|READONLY|CANTOPEN)/;

/**
 * The store's file could not be written: the disk is full or read-only, or the folder is gone.
 * What was committed before stays intact (each commit is one transaction), so the run resumes
 * with the same command once the disk is writable again.
 */
export class StoreWriteError extends Error {
  readonly file: string;
  readonly code: string;

  constructor(file: string, code: string, reason: string) {
    super(
      `${file}: cannot write the run store (${code}: ${reason}); the disk may be full or read-only. ` +
        "What is already stored is kept; run the same command again to resume once the disk is writable.",
    );
    this.name = "StoreWriteError";
    this.file = file;
    this.code = code;
  }
}

export function isStoreWriteError(error: unknown): error is StoreWriteError {
  return error instanceof StoreWriteError;
}

/** Rethrows a refused disk write as a StoreWriteError; anything else unchanged. */
function guardWrite<T>(file: string, write: () => T): T {
  try {
    return write();
  } catch (error) {
    if (error instanceof StoreWriteError) throw error;
    const code = (error as { code?: unknown }).code;
    if (typeof code === "string" && DISK_CODES.test(code)) throw new StoreWriteError(file, code, (error as Error).message);
    throw error;
  }
}

/**
 * `mkdir -p` that reports why the file system refused: Node's recursive mkdir says ENOENT when a
 * read-only file system refuses the new folder, so the nearest missing folder is made on its own
 * to get the real reason (EROFS, EACCES, ENOSPC), with its path.
 */
function makeFolder(folder: string): void {
  try {
    mkdirSync(folder, { recursive: true });
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code !== "ENOENT") throw error;
    let missing = folder;
    while (!existsSync(dirname(missing)) && dirname(missing) !== missing) missing = dirname(missing);
    mkdirSync(missing);
    mkdirSync(folder, { recursive: true });
  }
}

function toBlob(values: Float32Array | Uint32Array): Buffer {
  return Buffer.from(values.buffer, values.byteOffset, values.byteLength);
}

/** Copies a blob into a fresh, aligned typed array. */
export function float32FromBlob(blob: Buffer): Float32Array {
  const out = new Float32Array(blob.byteLength / 4);
  new Uint8Array(out.buffer).set(blob);
  return out;
}

function uint32FromBlob(blob: Buffer): Uint32Array {
  const out = new Uint32Array(blob.byteLength / 4);
  new Uint8Array(out.buffer).set(blob);
  return out;
}

/**
 * The run store: one SQLite file per run folder (WAL). The coordinator is the only
 * writer; the server, the board and the aggregator open it read-only. Every fold
 * result is committed in one transaction together with its event and the trial's
 * new status, so a crash leaves either all of it or none of it.
 */
export class RunStore {
  readonly folder: string;
  private readonly db: Database.Database;

  private get file(): string {
    return join(this.folder, STORE_FILE);
  }

  private constructor(folder: string, db: Database.Database) {
    this.folder = folder;
    this.db = db;
  }

  /** Opens (creating when `create`) the store of a run folder. */
  static open(folder: string, options: { create?: boolean; readonly?: boolean } = {}): RunStore {
    const file = join(folder, STORE_FILE);
    if (!existsSync(file)) {
      if (!options.create) throw new Error(`${folder}: no run store (${STORE_FILE}) in this folder`);
      makeFolder(folder);
    }
    const db = new Database(file, { readonly: options.readonly ?? false, fileMustExist: !options.create });
    if (!options.readonly) {
      guardWrite(file, () => {
        db.pragma("journal_mode = WAL");
        // WAL + NORMAL is durable against a killed process (kill -9); an OS crash may lose the last commits,
        // which are then redone as fold jobs with identical results.
        db.pragma("synchronous = NORMAL");
        // One transaction: a process killed while creating the store leaves all tables or none.
        db.transaction(() => db.exec(SCHEMA))();
      });
    }
    db.pragma("busy_timeout = 5000");
    return new RunStore(folder, db);
  }

  static exists(folder: string): boolean {
    return existsSync(join(folder, STORE_FILE));
  }

  close(): void {
    this.db.close();
  }

  getMeta(key: string): string | undefined {
    // A store whose creating process died before writing its schema has no meta yet: a run not started.
    if (!this.db.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'meta'").get()) return undefined;
    const row = this.db.prepare("SELECT value FROM meta WHERE key = ?").get(key) as { value: string } | undefined;
    return row?.value;
  }

  setMeta(key: string, value: string): void {
    guardWrite(this.file, () => {
      this.db.prepare("INSERT INTO meta (key, value) VALUES (?, ?) ON CONFLICT(key) DO UPDATE SET value = excluded.value").run(key, value);
    });
  }

  /** Sets meta keys only where absent, in one transaction; returns the stored values. */
  initMeta(values: Record<string, string>): Record<string, string> {
    return guardWrite(this.file, () => {
      const insert = this.db.prepare("INSERT OR IGNORE INTO meta (key, value) VALUES (?, ?)");
      this.db.transaction(() => {
        for (const [k, v] of Object.entries(values)) insert.run(k, v);
      })();
      const out: Record<string, string> = {};
      for (const key of Object.keys(values)) out[key] = this.getMeta(key) ?? "";
      return out;
    });
  }

  saveFolds(folds: ReadonlyArray<{ repeat: number; index: number; test: Uint32Array }>): void {
    guardWrite(this.file, () => {
      const insert = this.db.prepare("INSERT OR IGNORE INTO folds (fold, repeat, idx, test_rows) VALUES (?, ?, ?, ?)");
      this.db.transaction(() => folds.forEach((f, i) => insert.run(i, f.repeat, f.index, toBlob(f.test))))();
    });
  }

  folds(): Array<{ fold: number; repeat: number; index: number; test: Uint32Array }> {
    const rows = this.db.prepare("SELECT fold, repeat, idx, test_rows FROM folds ORDER BY fold").all() as Array<{ fold: number; repeat: number; idx: number; test_rows: Buffer }>;
    return rows.map((r) => ({ fold: r.fold, repeat: r.repeat, index: r.idx, test: uint32FromBlob(r.test_rows) }));
  }

  /** Records trials that are not yet stored (a resumed run re-derives the same ones). */
  addTrials(trials: ReadonlyArray<{ trial: number; family: string; params: Record<string, unknown> }>): void {
    guardWrite(this.file, () => {
      const insert = this.db.prepare("INSERT OR IGNORE INTO trials (trial, family, params) VALUES (?, ?, ?)");
      this.db.transaction(() => {
        for (const t of trials) insert.run(t.trial, t.family, JSON.stringify(t.params));
      })();
    });
  }

  trials(): TrialRecord[] {
    const rows = this.db.prepare("SELECT trial, family, params, status, message FROM trials ORDER BY trial").all() as Array<{ trial: number; family: string; params: string; status: TrialStatus; message: string | null }>;
    return rows.map((r) => ({ ...r, params: JSON.parse(r.params) as Record<string, unknown> }));
  }

  setTrialStatus(trial: number, status: TrialStatus, message: string | null = null, event?: { kind: string; data: Record<string, unknown> }): void {
    guardWrite(this.file, () => {
      this.db.transaction(() => {
        this.db.prepare("UPDATE trials SET status = ?, message = ? WHERE trial = ?").run(status, message, trial);
        if (event) this.insertEvent(event.kind, event.data);
      })();
    });
  }

  /**
   * Commits one fold result, the trial's status after it and an event, in one transaction.
   * A result that is already stored is left as it is (a redone job gives the same result).
   * Returns false when it was already stored.
   */
  commitFoldResult(result: FoldResultRecord, trialStatus?: { status: TrialStatus; message: string | null }, event?: { kind: string; data: Record<string, unknown> }): boolean {
    return guardWrite(this.file, () => {
      let inserted = false;
      this.db.transaction(() => {
        const info = this.db
          .prepare("INSERT OR IGNORE INTO fold_results (trial, fold, score, fit_s, predict_s, oof, error, committed_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)")
          .run(result.trial, result.fold, result.score, result.fitSeconds, result.predictSeconds, result.outOfFold ? toBlob(result.outOfFold) : null, result.error, new Date().toISOString());
        inserted = info.changes === 1;
        if (!inserted) return;
        if (trialStatus) this.db.prepare("UPDATE trials SET status = ?, message = ? WHERE trial = ?").run(trialStatus.status, trialStatus.message, result.trial);
        if (event) this.insertEvent(event.kind, event.data);
      })();
      return inserted;
    });
  }

  /** Fold results without their predictions (cheap; for boards and scheduling). */
  foldScores(): Array<Omit<FoldResultRecord, "outOfFold">> {
    const rows = this.db.prepare("SELECT trial, fold, score, fit_s, predict_s, error FROM fold_results ORDER BY trial, fold").all() as Array<{ trial: number; fold: number; score: number | null; fit_s: number; predict_s: number; error: string | null }>;
    return rows.map((r) => ({ trial: r.trial, fold: r.fold, score: r.score, fitSeconds: r.fit_s, predictSeconds: r.predict_s, error: r.error }));
  }

  /** Out-of-fold predictions of one trial, per fold (null where the fold failed or is missing). */
  outOfFold(trial: number): Map<number, Float32Array> {
    const rows = this.db.prepare("SELECT fold, oof FROM fold_results WHERE trial = ? AND oof IS NOT NULL ORDER BY fold").all(trial) as Array<{ fold: number; oof: Buffer }>;
    return new Map(rows.map((r) => [r.fold, float32FromBlob(r.oof)]));
  }

  recordHalving(decisions: readonly HalvingDecision[], event?: { kind: string; data: Record<string, unknown> }): void {
    guardWrite(this.file, () => {
      const insert = this.db.prepare("INSERT OR IGNORE INTO halving (batch, rung, trial, score, promoted) VALUES (?, ?, ?, ?, ?)");
      const prune = this.db.prepare("UPDATE trials SET status = 'pruned' WHERE trial = ? AND status IN ('queued', 'running')");
      this.db.transaction(() => {
        for (const d of decisions) {
          insert.run(d.batch, d.rung, d.trial, d.score, d.promoted ? 1 : 0);
          if (!d.promoted) prune.run(d.trial);
        }
        if (event) this.insertEvent(event.kind, event.data);
      })();
    });
  }

  halvingDecisions(): HalvingDecision[] {
    const rows = this.db.prepare("SELECT batch, rung, trial, score, promoted FROM halving ORDER BY batch, rung, trial").all() as Array<{ batch: number; rung: number; trial: number; score: number | null; promoted: number }>;
    return rows.map((r) => ({ ...r, promoted: r.promoted === 1 }));
  }

  addEvent(kind: string, data: Record<string, unknown>): void {
    guardWrite(this.file, () => {
      this.insertEvent(kind, data);
    });
  }

  private insertEvent(kind: string, data: Record<string, unknown>): void {
    this.db.prepare("INSERT INTO events (at, kind, data) VALUES (?, ?, ?)").run(new Date().toISOString(), kind, JSON.stringify(data));
  }

  events(afterId = 0, limit = 1000): StoredEvent[] {
    const rows = this.db.prepare("SELECT id, at, kind, data FROM events WHERE id > ? ORDER BY id LIMIT ?").all(afterId, limit) as Array<{ id: number; at: string; kind: string; data: string }>;
    return rows.map((r) => ({ ...r, data: JSON.parse(r.data) as Record<string, unknown> }));
  }

  /**
   * Runs several writes as one transaction: all of them are stored or none (a failed write, a full
   * disk or a killed process leaves none). Writes inside may be any of this store's methods.
   */
  atomically<T>(writes: () => T): T {
    return guardWrite(this.file, () => this.db.transaction(writes)());
  }

  /** Named results of later steps (ensembles, hold-out opening): JSON text, written once or replaced. */
  putArtifact(name: string, kind: string, data: unknown): void {
    guardWrite(this.file, () => {
      this.db
        .prepare("INSERT INTO artifacts (name, kind, data, created_at) VALUES (?, ?, ?, ?) ON CONFLICT(name) DO UPDATE SET kind = excluded.kind, data = excluded.data, created_at = excluded.created_at")
        .run(name, kind, JSON.stringify(data), new Date().toISOString());
    });
  }

  deleteArtifact(name: string): void {
    guardWrite(this.file, () => {
      this.db.prepare("DELETE FROM artifacts WHERE name = ?").run(name);
    });
  }

  artifact(name: string): { kind: string; data: unknown; createdAt: string } | undefined {
    const row = this.db.prepare("SELECT kind, data, created_at FROM artifacts WHERE name = ?").get(name) as { kind: string; data: string; created_at: string } | undefined;
    return row ? { kind: row.kind, data: JSON.parse(row.data) as unknown, createdAt: row.created_at } : undefined;
  }

  artifacts(kind?: string): Array<{ name: string; kind: string; data: unknown; createdAt: string }> {
    const rows = (kind
      ? this.db.prepare("SELECT name, kind, data, created_at FROM artifacts WHERE kind = ? ORDER BY name").all(kind)
      : this.db.prepare("SELECT name, kind, data, created_at FROM artifacts ORDER BY name").all()) as Array<{ name: string; kind: string; data: string; created_at: string }>;
    return rows.map((r) => ({ name: r.name, kind: r.kind, data: JSON.parse(r.data) as unknown, createdAt: r.created_at }));
  }

  integrityCheck(): string {
    return (this.db.pragma("integrity_check", { simple: true }) as string) ?? "unknown";
  }
}
