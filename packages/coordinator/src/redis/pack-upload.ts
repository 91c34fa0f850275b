import { unpackDataset } from "@nightshift/core";
import { packKey } from "@nightshift/worker";
import type { Redis } from "ioredis";

/**
 * Puts a dataset pack on Redis under its fingerprint (the sha256 of its content), unless an
 * intact-sized copy is already there, and (re)sets its expiry. Content addressing makes the
 * upload idempotent and shared: runs on the same rows share one copy. (Only training rows go up:
 * the final step's refit jobs fit on them too, and the coordinator scores the hold-out itself.)
 * Workers check the hash of what they fetch (`PackCache`). Returns the fingerprint.
 */
export async function uploadPack(redis: Redis, namespace: string, pack: Uint8Array, keepMs: number): Promise<string> {
  const fingerprint = unpackDataset(pack).fingerprint;
  const key = packKey(namespace, fingerprint);
  if ((await redis.strlen(key)) !== pack.byteLength) await redis.set(key, Buffer.from(pack.buffer, pack.byteOffset, pack.byteLength), "PX", keepMs);
  else await redis.pexpire(key, keepMs);
  return fingerprint;
}
