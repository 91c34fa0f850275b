import { buildBoard } from "@nightshift/aggregator";
import { createRedisRunner, runSearch } from "@nightshift/coordinator";
import { InputError } from "@nightshift/core";
import { RunStore } from "@nightshift/store";
import { checkNamespace, checkRedis, clock, DEFAULT_NAMESPACE, type RedisEndpoint, redisEndpoint } from "@nightshift/worker";
import { parseVerbArgs, positiveInteger } from "../args.js";
import { formatBoard } from "../board-table.js";
import type { Verb } from "../commands.js";
import { createProgressBar } from "../progress.js";

export interface RunVerbOptions {
  readonly planPath: string;
  readonly runDir?: string;
  readonly runsDir?: string;
  readonly workers?: number;
  readonly json: boolean;
  readonly quiet: boolean;
  readonly trials?: number;
  readonly top?: number;
  /** Search only: leave the ensembles, refits and the hold-out for a later `run` of the finished run. */
  readonly searchOnly?: boolean;
  /** Fold jobs go to this Redis for `nightshift worker` processes, instead of local threads. */
  readonly redis?: { readonly endpoint: RedisEndpoint; readonly namespace: string };
}

/** Runs a plan with a progress bar and Ctrl-C handling, then prints the board. Shared by `run` and `demo`. */
export async function runAndReport(options: RunVerbOptions): Promise<number> {
  const live = !options.json && !options.quiet;
  let stopping = false;
  let runDir = options.runDir ?? "";
  let planName = options.planPath;
  const onSigint = (): void => {
    if (stopping) {
      process.stderr.write(
        options.redis
          ? "\nnightshift: stopped at once; the jobs in flight finish on the workers and their results are collected on resume.\n"
          : "\nnightshift: stopped at once; jobs in flight are lost and will be redone on resume.\n",
      );
      process.exit(130);
    }
    stopping = true;
    process.stderr.write(`\nnightshift: stopping after the jobs in flight (Ctrl-C again to stop at once). Resume with: nightshift run ${planName} --run-dir ${runDir}\n`);
  };
  process.on("SIGINT", onSigint);
  process.on("SIGTERM", onSigint);
  let bar: ReturnType<typeof createProgressBar> | undefined;
  const redis = options.redis;
  try {
    // A wrong URL or password is one message before the run folder is touched.
    if (redis) await checkRedis(redis.endpoint, "nightshift run --redis");
    const result = await runSearch({
      planPath: options.planPath,
      runDir: options.runDir,
      runsDir: options.runsDir,
      workers: options.workers,
      trials: options.trials,
      finalStep: !options.searchOnly,
      shouldStop: () => stopping,
      runner: redis
        ? (setup) =>
            createRedisRunner(redis.endpoint, setup, {
              namespace: redis.namespace,
              run: setup.run,
              onNotice: (message) => (bar ? bar.log(`nightshift: ${message}`) : process.stderr.write(`nightshift: ${message}\n`)),
              onRedisState: (since) => bar?.note(since === null ? null : `Redis unreachable since ${clock(since.getTime())}`),
            })
        : undefined,
      onStart: (info) => {
        runDir = info.runDir;
        planName = options.planPath;
        if (live) {
          process.stderr.write(
            `nightshift: ${info.resumed ? "resuming" : "starting"} run ${info.runId} in ${info.runDir}: ${info.trials} trials × ${info.folds} folds on ${info.rows} training rows\n`,
          );
          bar = createProgressBar(info.metric);
        }
      },
      onProgress: (p) => bar?.update(p),
    });
    bar?.stop();
    const store = RunStore.open(result.runDir, { readonly: true });
    try {
      const board = buildBoard(store, { top: options.top });
      if (options.json) console.log(JSON.stringify(board, null, 2));
      else {
        if (!options.quiet) console.log(formatBoard(board));
        if (!result.completed)
          console.error(
            result.stoppedBy === "time_budget"
              ? `nightshift: the time budget ran out; to go on: nightshift run ${options.planPath} --run-dir ${result.runDir}`
              : `nightshift: stopped; resume with: nightshift run ${options.planPath} --run-dir ${result.runDir}`,
          );
      }
      if (result.finalStep?.status === "no_ensemble" && !options.quiet) console.error(`nightshift: ${result.finalStep.message}`);
      for (const note of result.finalStep?.notes ?? []) if (/refit/.test(note) && !options.quiet) console.error(`nightshift: ${note}`);
      const allFailed = board.rows.length > 0 && board.rows.every((r) => r.status === "failed" || r.status === "timed_out");
      if (allFailed) console.error("nightshift: every trial failed; see the messages on the board (nightshift board " + result.runDir + ")");
    } finally {
      store.close();
    }
    return result.completed ? 0 : 130;
  } finally {
    bar?.stop();
    process.off("SIGINT", onSigint);
    process.off("SIGTERM", onSigint);
  }
}

export const runVerb: Verb = {
  name: "run",
  usage: "run <plan.yaml> [--run-dir DIR] [--workers N | --redis URL [--namespace NAME]] [--search-only] [--json] [--quiet]",
  summary: "run (or resume) a plan's search on local worker threads, or on workers sharing a Redis",
  async run(args) {
    const { values, positionals } = parseVerbArgs(
      "run",
      args,
      {
        "run-dir": { type: "string" },
        runs: { type: "string" },
        workers: { type: "string" },
        redis: { type: "string" },
        namespace: { type: "string" },
        json: { type: "boolean", default: false },
        quiet: { type: "boolean", default: false },
        top: { type: "string" },
        "search-only": { type: "boolean", default: false },
      },
      { min: 1, max: 1, names: "one plan file: nightshift run <plan.yaml>" },
    );
    if (values.redis !== undefined && values.workers !== undefined) throw new InputError("nightshift run", "--workers counts local threads; with --redis the jobs go to 'nightshift worker' processes (give them --concurrency)");
    if (values.redis === undefined && values.namespace !== undefined) throw new InputError("nightshift run --namespace", "only means something with --redis");
    return runAndReport({
      planPath: positionals[0],
      runDir: values["run-dir"],
      runsDir: values.runs,
      workers: positiveInteger("run", "workers", values.workers),
      json: values.json ?? false,
      quiet: values.quiet ?? false,
      top: positiveInteger("run", "top", values.top),
      searchOnly: values["search-only"] ?? false,
      redis:
        values.redis === undefined
          ? undefined
          : { endpoint: redisEndpoint(values.redis, "nightshift run --redis"), namespace: checkNamespace(values.namespace ?? DEFAULT_NAMESPACE, "nightshift run --namespace") },
    });
  },
};
