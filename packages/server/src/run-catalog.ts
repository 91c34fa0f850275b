import { existsSync, readdirSync, realpathSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { RunStore } from "@nightshift/store";

/** A run id in a URL is the name of a run folder: no separators, no dot-segments, nothing to escape. */
export const RUN_ID_PATTERN = /^[A-Za-z0-9][A-Za-z0-9_.-]{0,127}$/;

/**
 * The run folders directly inside one folder. A run id resolves only to a direct child that
 * holds a run store, after symbolic links are followed, so no request can make the server
 * read a file outside the runs folder.
 */
export class RunCatalog {
  readonly root: string;

  constructor(root: string) {
    this.root = resolve(root);
  }

  private realRoot(): string | null {
    try {
      return realpathSync(this.root);
    } catch {
      return null;
    }
  }

  /** The folder of run `id`, or null when the id is malformed or names no run folder of this catalog. */
  folderOf(id: string): string | null {
    if (!RUN_ID_PATTERN.test(id) || id.includes("..")) return null;
    const root = this.realRoot();
    if (root === null) return null;
    let folder: string;
    try {
      folder = realpathSync(join(root, id));
    } catch {
      return null;
    }
    if (dirname(folder) !== root) return null;
    return RunStore.exists(folder) ? folder : null;
  }

  /** Ids of the run folders, sorted. */
  ids(): string[] {
    const root = this.realRoot();
    if (root === null || !existsSync(root)) return [];
    return readdirSync(root, { withFileTypes: true })
      .filter((entry) => (entry.isDirectory() || entry.isSymbolicLink()) && this.folderOf(entry.name) !== null)
      .map((entry) => entry.name)
      .sort();
  }
}
