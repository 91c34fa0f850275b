import { mkdirSync } from "node:fs";
import { open, rename, rm, stat, writeFile } from "node:fs/promises";
import { homedir } from "node:os";
import { join } from "node:path";
import { unpackDataset } from "@nightshift/core";
import type { Redis } from "ioredis";
import { packKey } from "./queue-layout.js";

/** `$XDG_CACHE_HOME/nightshift`, else `~/.cache/nightshift`. */
export function defaultCacheDir(): string {
  const base = process.env.XDG_CACHE_HOME && process.env.XDG_CACHE_HOME !== "" ? process.env.XDG_CACHE_HOME : join(homedir(), ".cache");
  return join(base, "nightshift");
}

/** A pack was not there, or not intact: worth trying again later (the coordinator re-uploads). */
export class PackUnavailable extends Error {
  constructor(message: string) {
    super(message);
    this.name = "PackUnavailable";
  }
}

/**
 * Checks a pack against the fingerprint it was asked for: the sha256 of its content must
 * be that fingerprint. Returns its row count.
 */
export function verifyPack(bytes: Uint8Array, fingerprint: string): number {
  const dataset = unpackDataset(bytes, { verify: true });
  if (dataset.fingerprint !== fingerprint) throw new Error(`the pack holds dataset ${dataset.fingerprint.slice(0, 12)}, not ${fingerprint.slice(0, 12)}`);
  return dataset.rowCount;
}

export interface CachedPack {
  /** The pack in a SharedArrayBuffer: every worker thread of this process reads the same memory. */
  readonly bytes: Uint8Array;
  readonly rowCount: number;
}

/**
 * Dataset packs on this box: fetched from Redis once, verified, kept on disk (so a
 * restarted worker does not fetch again) and in memory (the last few used). Packs are
 * content-addressed, so a cached file is never stale: it is the fingerprint's content or
 * it is thrown away.
 */
export class PackCache {
  private readonly memory = new Map<string, CachedPack>();
  private readonly loading = new Map<string, Promise<CachedPack>>();
  private readonly dir: string;

  constructor(
    private readonly redis: Redis,
    private readonly namespace: string,
    dir: string,
    private readonly keep = 2,
  ) {
    this.dir = join(dir, "packs");
    mkdirSync(this.dir, { recursive: true });
  }

  get(fingerprint: string): Promise<CachedPack> {
    const held = this.memory.get(fingerprint);
    if (held) {
      this.memory.delete(fingerprint);
      this.memory.set(fingerprint, held);
      return Promise.resolve(held);
    }
    let pending = this.loading.get(fingerprint);
    if (!pending) {
      pending = this.load(fingerprint).finally(() => this.loading.delete(fingerprint));
      this.loading.set(fingerprint, pending);
    }
    return pending;
  }

  private async load(fingerprint: string): Promise<CachedPack> {
    const file = join(this.dir, `${fingerprint}.pack`);
    let pack = await this.fromDisk(file, fingerprint);
    if (!pack) {
      const fetched = await this.redis.getBuffer(packKey(this.namespace, fingerprint));
      if (fetched === null) throw new PackUnavailable(`dataset ${fingerprint.slice(0, 12)} is not in Redis (yet)`);
      const bytes = new Uint8Array(new SharedArrayBuffer(fetched.length));
      bytes.set(fetched);
      let rowCount: number;
      try {
        rowCount = verifyPack(bytes, fingerprint);
      } catch (error) {
        // Content-addressed: bytes that do not hash to their key are garbage; dropping them
        // lets the coordinator notice and upload the pack again.
        await this.redis.del(packKey(this.namespace, fingerprint));
        throw new PackUnavailable(`dataset ${fingerprint.slice(0, 12)} in Redis was damaged and is dropped (${(error as Error).message})`);
      }
      const partial = `${file}.${process.pid}.part`;
      await writeFile(partial, bytes);
      await rename(partial, file);
      pack = { bytes, rowCount };
    }
    this.memory.set(fingerprint, pack);
    while (this.memory.size > this.keep) this.memory.delete(this.memory.keys().next().value as string);
    return pack;
  }

  private async fromDisk(file: string, fingerprint: string): Promise<CachedPack | null> {
    let size: number;
    try {
      size = (await stat(file)).size;
    } catch {
      return null;
    }
    const bytes = new Uint8Array(new SharedArrayBuffer(size));
    const handle = await open(file, "r");
    try {
      for (let at = 0; at < size; ) {
        const { bytesRead } = await handle.read(bytes, at, size - at, at);
        if (bytesRead === 0) break;
        at += bytesRead;
      }
    } finally {
      await handle.close();
    }
    try {
      return { bytes, rowCount: verifyPack(bytes, fingerprint) };
    } catch {
      await rm(file, { force: true });
      return null;
    }
  }
}
