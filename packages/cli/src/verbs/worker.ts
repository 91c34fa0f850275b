import { InputError } from "@nightshift/core";
import { checkNamespace, DEFAULT_NAMESPACE, defaultCacheDir, redisEndpoint, startQueueWorker, waitForRedis } from "@nightshift/worker";
import { parseVerbArgs, positiveInteger } from "../args.js";
import type { Verb } from "../commands.js";

function positiveSeconds(value: string | undefined): number | undefined {
  if (value === undefined) return undefined;
  const n = Number(value);
  if (!Number.isFinite(n) || n < 1) throw new InputError("nightshift worker --lock-seconds", `must be a number of seconds, at least 1 (got '${value}')`);
  return n;
}

export const workerVerb: Verb = {
  name: "worker",
  usage: "worker --redis URL [--concurrency N] [--namespace NAME] [--cache DIR] [--lock-seconds S]",
  summary: "serve fold jobs of every run queued on a Redis (on any number of boxes)",
  async run(args) {
    const { values } = parseVerbArgs(
      "worker",
      args,
      {
        redis: { type: "string" },
        concurrency: { type: "string" },
        namespace: { type: "string" },
        cache: { type: "string" },
        "lock-seconds": { type: "string" },
      },
      { min: 0, max: 0, names: "no file arguments: nightshift worker --redis URL" },
    );
    if (values.redis === undefined) throw new InputError("nightshift worker", "--redis URL is required (the Redis the coordinator queues on, e.g. redis://:PASSWORD@host:6379)");
    const endpoint = redisEndpoint(values.redis, "nightshift worker --redis");
    const namespace = checkNamespace(values.namespace ?? DEFAULT_NAMESPACE, "nightshift worker --namespace");
    const cacheDir = values.cache ?? defaultCacheDir();
    // A worker is a service: one started before its Redis (or during an outage) waits for it.
    await waitForRedis(endpoint, "nightshift worker --redis", (line) => process.stderr.write(`${line}\n`));
    const worker = await startQueueWorker({
      endpoint,
      namespace,
      concurrency: positiveInteger("worker", "concurrency", values.concurrency),
      cacheDir,
      lockSeconds: positiveSeconds(values["lock-seconds"]),
      log: (line) => process.stderr.write(`${line}\n`),
    });
    process.stderr.write(`nightshift worker ${worker.id}: serving namespace '${namespace}' on ${endpoint.label} with ${worker.concurrency} thread(s); dataset cache ${cacheDir}\n`);

    let signals = 0;
    const onSignal = (): void => {
      signals++;
      if (signals === 1) {
        process.stderr.write("nightshift worker: finishing the jobs in progress, then exiting (Ctrl-C again to hand them back to the queue now)\n");
        void worker.stop();
      } else if (signals === 2) {
        process.stderr.write("nightshift worker: handing the jobs in progress back to the queue\n");
        void worker.release();
      }
    };
    process.on("SIGINT", onSignal);
    process.on("SIGTERM", onSignal);
    try {
      await worker.closed;
    } finally {
      process.off("SIGINT", onSignal);
      process.off("SIGTERM", onSignal);
    }
    process.stderr.write(`nightshift worker ${worker.id}: stopped\n`);
    return 0;
  },
};
