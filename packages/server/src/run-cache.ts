import { statSync } from "node:fs";
import { join } from "node:path";
import { STORE_FILE } from "@nightshift/store";

/**
 * The state of a run store as its files show it: size and modification time (ns) of the
 * database and of its write-ahead log. Every commit of the writer appends to the log, and a
 * checkpoint rewrites the database, so a commit always changes the stamp, while readers
 * (this server) change neither file.
 */
export function storeStamp(folder: string): string {
  const parts: string[] = [];
  for (const name of [STORE_FILE, `${STORE_FILE}-wal`]) {
    try {
      const info = statSync(join(folder, name), { bigint: true });
      parts.push(`${info.size}:${info.mtimeNs}`);
    } catch {
      parts.push("-");
    }
  }
  return parts.join("/");
}

/**
 * Values derived from a run store (its board, its tables), kept until the store changes, for
 * the few runs looked at last. The stamp is taken before the value is computed, so a commit
 * that lands in between makes the next request recompute rather than keep a stale value.
 */
export class RunCache {
  private readonly runs = new Map<string, { stamp: string; values: Map<string, unknown> }>();
  private readonly maxRuns: number;

  constructor(maxRuns = 8) {
    this.maxRuns = maxRuns;
  }

  get<T>(folder: string, name: string, compute: () => T): T {
    const stamp = storeStamp(folder);
    let entry = this.runs.get(folder);
    if (!entry || entry.stamp !== stamp) entry = { stamp, values: new Map() };
    this.runs.delete(folder);
    this.runs.set(folder, entry);
    while (this.runs.size > this.maxRuns) this.runs.delete(this.runs.keys().next().value as string);
    if (entry.values.has(name)) return entry.values.get(name) as T;
    const value = compute();
    entry.values.set(name, value);
    return value;
  }
}
