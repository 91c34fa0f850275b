import { type ChildProcess, spawn } from "node:child_process";
import { createServer } from "node:net";
import { join, resolve } from "node:path";

const CLI = resolve(import.meta.dirname, "../../packages/cli/bin/nightshift.js");

/** A free TCP port on 127.0.0.1, for a private redis-server. */
export async function freePort(): Promise<number> {
  return new Promise((done) => {
    const server = createServer();
    server.listen(0, "127.0.0.1", () => {
      const address = server.address();
      server.close(() => done(typeof address === "object" && address ? address.port : 0));
    });
  });
}

/** `nightshift worker` processes of one thread each on a namespace, each serving when this resolves; caches under `cacheDir`. */
export async function startBenchWorkers(url: string, namespace: string, count: number, cacheDir: string): Promise<ChildProcess[]> {
  const workers = Array.from({ length: count }, (_, i) =>
    spawn(process.execPath, [CLI, "worker", "--redis", url, "--namespace", namespace, "--concurrency", "1", "--cache", join(cacheDir, `cache-${namespace}-${i}`)], { stdio: ["ignore", "ignore", "pipe"] }),
  );
  await Promise.all(
    workers.map(
      (w) =>
        new Promise<void>((ready) => {
          let text = "";
          w.stderr?.on("data", (d: Buffer) => {
            text += d.toString();
            if (text.includes("serving namespace")) ready();
          });
        }),
    ),
  );
  return workers;
}
