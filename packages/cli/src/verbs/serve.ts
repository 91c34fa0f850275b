import { InputError } from "@nightshift/core";
import { accessProblem, startServer, TOKEN_ENV } from "@nightshift/server";
import { existsSync } from "node:fs";
import { resolve } from "node:path";
import { parseVerbArgs } from "../args.js";
import type { Verb } from "../commands.js";

export const DEFAULT_PORT = 7313;

export const serveVerb: Verb = {
  name: "serve",
  usage: "serve [--runs DIR] [--port P] [--host H] [--token T]",
  summary: "serve the runs' leaderboards, live progress and dashboard over HTTP",
  async run(args) {
    const { values } = parseVerbArgs(
      "serve",
      args,
      { runs: { type: "string", default: "runs" }, port: { type: "string" }, host: { type: "string", default: "127.0.0.1" }, token: { type: "string" } },
      { min: 0, max: 0, names: "no file arguments (the runs folder is --runs DIR)" },
    );
    const port = values.port === undefined ? DEFAULT_PORT : Number(values.port);
    if (!Number.isInteger(port) || port < 0 || port > 65535) throw new InputError("nightshift serve --port", `must be a port number 0-65535 (got '${values.port}')`);
    const token = values.token ?? (process.env[TOKEN_ENV] || undefined);
    const problem = accessProblem(values.host, token);
    if (problem !== null) throw new InputError("nightshift serve --host", problem);
    const runsDir = resolve(values.runs);
    if (!existsSync(runsDir)) console.error(`nightshift: ${values.runs} does not exist yet; runs will show once it does`);

    let started: Awaited<ReturnType<typeof startServer>>;
    try {
      started = await startServer({ runsDir, token, host: values.host, port });
    } catch (error) {
      const code = (error as { code?: string }).code;
      if (code === "EADDRINUSE") throw new InputError("nightshift serve --port", `port ${port} is in use; pick another with --port`);
      if (code === "EADDRNOTAVAIL") throw new InputError("nightshift serve --host", `${values.host} is not an address of this machine`);
      throw error;
    }
    console.error(`nightshift: serving ${values.runs} on ${started.url}${token === undefined ? "" : " (token required: open the page once with ?token=<token>)"}; Ctrl-C stops`);
    await new Promise<void>((done) => {
      const stop = (): void => {
        process.off("SIGINT", stop);
        process.off("SIGTERM", stop);
        void started.app.close().then(done);
      };
      process.on("SIGINT", stop);
      process.on("SIGTERM", stop);
    });
    return 0;
  },
};
