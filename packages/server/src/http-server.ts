import { buildBoard } from "@nightshift/aggregator";
import { RunStore } from "@nightshift/store";
import Fastify, { type FastifyInstance, type FastifyReply } from "fastify";
import { type ZodType, z } from "zod";
import { presentedToken, TOKEN_COOKIE, tokenMatches } from "./access.js";
import { boardPage } from "./board-page.js";
import { type Asset, DashboardAssets } from "./dashboard-assets.js";
import { HttpError } from "./http-errors.js";
import { RunCatalog, RUN_ID_PATTERN } from "./run-catalog.js";
import { RunCache } from "./run-cache.js";
import { ensemblesOf, isStartedRun, readEventTail, readRunTables, runDetail, runSummary, summaryParts, trialDetail } from "./run-views.js";
import type { RunActivity } from "./run-activity.js";
import { RunWatches, type WatchOptions } from "./run-watch.js";
import {
  BoardPageSchema,
  BoardQuerySchema,
  EmptyQuerySchema,
  EnsemblesResponseSchema,
  type ErrorResponse,
  ErrorResponseSchema,
  EventsQuerySchema,
  RunDetailSchema,
  RunListSchema,
  type RunSummary,
  TrialDetailSchema,
  TrialQuerySchema,
} from "./schemas.js";

export interface ServerOptions {
  /** The folder whose subfolders are run folders. */
  readonly runsDir: string;
  /** When set, every request must present it (bearer header, `?token=`, or the cookie set by the dashboard). */
  readonly token?: string;
  readonly watch?: Partial<WatchOptions>;
  /** Milliseconds since the epoch; a test fixes it to check pace and ETA. */
  readonly clock?: () => number;
}

/** Longest request line (path and query) accepted. */
export const MAX_URL_LENGTH = 2048;
/** Largest request body accepted: the API is read-only and takes none. */
export const MAX_BODY_BYTES = 1024;

const SECURITY_HEADERS: Record<string, string> = {
  "x-content-type-options": "nosniff",
  "referrer-policy": "no-referrer",
  "x-frame-options": "DENY",
  "cross-origin-resource-policy": "same-origin",
};

// Vega evaluates chart expressions through its interpreter (no eval); vega-embed adds inline styles.
const PAGE_POLICY = "default-src 'self'; script-src 'self'; style-src 'self' 'unsafe-inline'; img-src 'self' data: blob:; connect-src 'self'; object-src 'none'; base-uri 'none'; frame-ancestors 'none'; form-action 'none'";

function parseQuery<T extends ZodType>(schema: T, query: unknown): z.output<T> {
  const parsed = schema.safeParse(query);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const key = issue.path.length > 0 ? issue.path.join(".") : issue.code === "unrecognized_keys" ? (issue as { keys?: string[] }).keys?.join(", ") : "query";
    throw new HttpError("bad_request", `query ${key}: ${issue.message}`);
  }
  return parsed.data;
}

function sendJson<T extends ZodType>(reply: FastifyReply, schema: T, value: z.input<T>): FastifyReply {
  return reply.type("application/json; charset=utf-8").header("cache-control", "no-store").send(JSON.stringify(schema.parse(value)));
}

function sendAsset(reply: FastifyReply, asset: Asset | null, what: string, cache: string): FastifyReply {
  if (asset === null) throw new HttpError("not_found", `no ${what}`);
  return reply.type(asset.type).header("cache-control", cache).send(asset.body);
}

/** The answer to a request that failed: the user's mistakes as 4xx with their message, anything else as a bare 500. */
function errorResponse(error: unknown): { status: number; body: ErrorResponse } {
  if (error instanceof HttpError) return { status: error.status, body: { error: error.kind, message: error.message } };
  // Fastify's own refusals (a body over the limit, a malformed header) carry their status.
  const code = (error as { statusCode?: unknown }).statusCode;
  if (code === 413) return { status: 413, body: { error: "too_large", message: `request bodies are limited to ${MAX_BODY_BYTES} bytes` } };
  if (typeof code === "number" && code >= 400 && code < 500) return { status: code, body: { error: "bad_request", message: (error as Error).message } };
  // Values the maths refuses (a class index the run does not have) come from the query.
  if (error instanceof RangeError) return { status: 400, body: { error: "bad_request", message: error.message } };
  return { status: 500, body: { error: "internal", message: "internal error; see the server's log" } };
}

/**
 * The HTTP face of a folder of runs (DESIGN.md, HTTP): the JSON API, a server-sent events
 * stream per run, and the dashboard. It only reads run stores (read-only connections), so it
 * serves runs another process is writing.
 */
export async function createServer(options: ServerOptions): Promise<FastifyInstance> {
  const catalog = new RunCatalog(options.runsDir);
  const watches = new RunWatches(options.watch);
  const assets = new DashboardAssets();
  // Boards and tables of the few runs being looked at; summaries (small) of many.
  const cache = new RunCache(8);
  const summaries = new RunCache(512);
  const clock = options.clock ?? Date.now;
  const app = Fastify({
    logger: false,
    bodyLimit: MAX_BODY_BYTES,
    routerOptions: { maxParamLength: 200 },
    return503OnClosing: true,
    // Refusals made before routing (a malformed percent-encoding) answer in the API's own error shape.
    frameworkErrors: (error, _request, frameworkReply) => {
      const { status, body } = errorResponse(error);
      const reply = frameworkReply as FastifyReply;
      for (const [name, value] of Object.entries(SECURITY_HEADERS)) reply.header(name, value);
      return reply.status(status).type("application/json; charset=utf-8").send(JSON.stringify(ErrorResponseSchema.parse(body)));
    },
  });

  app.addHook("onRequest", async (request, reply) => {
    for (const [name, value] of Object.entries(SECURITY_HEADERS)) reply.header(name, value);
    if (request.url.length > MAX_URL_LENGTH) throw new HttpError("too_large", `the request line is longer than ${MAX_URL_LENGTH} characters`);
    if (options.token === undefined) return;
    const presented = presentedToken(request.headers, request.query);
    if (!tokenMatches(options.token, presented)) {
      reply.header("www-authenticate", 'Bearer realm="nightshift"');
      throw new HttpError("unauthorized", "this server needs its token: an Authorization: Bearer header, or ?token= once in the browser");
    }
    if ((request.query as { token?: unknown }).token !== undefined) {
      reply.header("set-cookie", `${TOKEN_COOKIE}=${encodeURIComponent(options.token)}; HttpOnly; SameSite=Strict; Path=/`);
    }
  });

  app.setErrorHandler((error, _request, reply) => {
    const { status, body } = errorResponse(error);
    if (status === 500) console.error(error);
    return reply.status(status).type("application/json; charset=utf-8").send(JSON.stringify(ErrorResponseSchema.parse(body)));
  });

  app.setNotFoundHandler((request, reply) =>
    reply
      .status(404)
      .type("application/json; charset=utf-8")
      .send(JSON.stringify(ErrorResponseSchema.parse({ error: "not_found", message: `no route ${request.method} ${request.url.split("?")[0]}` }))),
  );

  // Event streams never end by themselves: end them before the server waits for its connections.
  app.addHook("preClose", async () => watches.close());

  /** The folder of a started run, or the 400/404 that says why not. */
  const folderOf = (id: string): string => {
    if (!RUN_ID_PATTERN.test(id)) throw new HttpError("bad_request", "a run id is a run folder's name: letters, digits, '.', '_' and '-'");
    const folder = catalog.folderOf(id);
    if (folder === null) throw new HttpError("not_found", `no run '${id}' in the runs folder`);
    return folder;
  };

  /** Reads a started run through its watch's connection (kept open while the run is looked at). */
  const withRun = <T>(id: string, read: (store: RunStore, folder: string, activity: RunActivity) => T): T => {
    const folder = folderOf(id);
    const watch = watches.watch(folder);
    try {
      const store = watch.reader();
      if (!isStartedRun(store)) throw new HttpError("not_found", `run '${id}' has not started yet`);
      return read(store, folder, watch.activity);
    } catch (error) {
      if (!(error instanceof HttpError) && !(error instanceof RangeError)) watch.resetReader();
      throw error;
    }
  };

  const boardOf = (store: RunStore, folder: string) => cache.get(folder, "board", () => buildBoard(store));
  const tablesOf = (store: RunStore, folder: string) => cache.get(folder, "tables", () => readRunTables(store));

  /**
   * The summary of every run. A run that is not running is summed up once per change of its
   * store, from a connection opened only then; a running one is followed by its watch for its pace.
   */
  app.get("/api/runs", async (request, reply) => {
    parseQuery(EmptyQuerySchema, request.query);
    const runs: RunSummary[] = [];
    for (const id of catalog.ids()) {
      const folder = catalog.folderOf(id);
      if (folder === null) continue;
      try {
        const parts = summaries.get(folder, "summary", () => {
          const store = RunStore.open(folder, { readonly: true });
          try {
            return isStartedRun(store) ? { ...summaryParts(readRunTables(store)), tail: readEventTail(store) } : null;
          } finally {
            store.close();
          }
        });
        if (parts === null) continue;
        const activity = parts.head.state === "running" ? watches.watch(folder).activity : parts.tail;
        runs.push(runSummary(id, parts, activity, clock()));
      } catch (error) {
        // A store being created is not listed yet.
        if ((error as Error).name !== "SqliteError") throw error;
      }
    }
    return sendJson(reply, RunListSchema, { runs });
  });

  app.get<{ Params: { id: string } }>("/api/runs/:id", async (request, reply) => {
    parseQuery(EmptyQuerySchema, request.query);
    const detail = withRun(request.params.id, (store, folder, activity) => runDetail(request.params.id, tablesOf(store, folder), activity, clock()));
    return sendJson(reply, RunDetailSchema, detail);
  });

  app.get<{ Params: { id: string } }>("/api/runs/:id/board", async (request, reply) => {
    const query = parseQuery(BoardQuerySchema, request.query);
    const page = withRun(request.params.id, (store, folder) => boardPage(boardOf(store, folder), query));
    return sendJson(reply, BoardPageSchema, page);
  });

  app.get<{ Params: { id: string; trial: string } }>("/api/runs/:id/trials/:trial", async (request, reply) => {
    const query = parseQuery(TrialQuerySchema, request.query);
    const { id, trial } = request.params;
    const detail = withRun(id, (store, folder) => {
      if (!/^\d{1,9}$/.test(trial)) throw new HttpError("bad_request", `a trial is a whole number (got '${trial}')`);
      const found = trialDetail(store, Number(trial), query, boardOf(store, folder), tablesOf(store, folder).results);
      if (found === null) throw new HttpError("not_found", `run '${id}' has no trial ${trial}`);
      return found;
    });
    return sendJson(reply, TrialDetailSchema, detail);
  });

  app.get<{ Params: { id: string } }>("/api/runs/:id/ensembles", async (request, reply) => {
    parseQuery(EmptyQuerySchema, request.query);
    return sendJson(reply, EnsemblesResponseSchema, withRun(request.params.id, (store, folder) => ensemblesOf(tablesOf(store, folder))));
  });

  app.get<{ Params: { id: string } }>("/api/runs/:id/events", { exposeHeadRoute: false }, async (request, reply) => {
    const query = parseQuery(EventsQuerySchema, request.query);
    const lastEventId = request.headers["last-event-id"];
    let after = query.after ?? 0;
    if (typeof lastEventId === "string") {
      if (!/^\d{1,15}$/.test(lastEventId)) throw new HttpError("bad_request", "Last-Event-ID must be an event id");
      after = Number(lastEventId);
    }
    const folder = withRun(request.params.id, (_store, f) => f);
    if (!watches.hasRoom()) throw new HttpError("unavailable", "too many event streams are open; try again later");
    reply.hijack();
    const raw = reply.raw;
    raw.writeHead(200, {
      ...SECURITY_HEADERS,
      "content-type": "text/event-stream; charset=utf-8",
      "cache-control": "no-store",
      connection: "keep-alive",
      "x-accel-buffering": "no",
    });
    raw.write("retry: 3000\n\n");
    watches.stream(folder, raw, after, query.kinds === undefined ? null : new Set(query.kinds.split(",")));
  });

  // The page ignores its query (a token, if any, was checked above).
  app.get("/", async (_request, reply) => {
    reply.header("content-security-policy", PAGE_POLICY);
    return sendAsset(reply, assets.page(), "dashboard page (static/index.html)", "no-store");
  });

  app.get<{ Params: { file: string } }>("/assets/:file", async (request, reply) =>
    sendAsset(reply, assets.asset(request.params.file), `asset '${request.params.file}'`, "no-cache"),
  );

  app.get<{ Params: { file: string } }>("/vendor/:file", async (request, reply) =>
    sendAsset(reply, assets.vendorBundle(request.params.file), `bundle '${request.params.file}'`, "public, max-age=86400"),
  );

  await app.ready();
  return app;
}

export interface ListenOptions extends ServerOptions {
  readonly host: string;
  readonly port: number;
}

/** Starts serving; resolves with the address once listening. */
export async function startServer(options: ListenOptions): Promise<{ app: FastifyInstance; url: string }> {
  const app = await createServer(options);
  await app.listen({ host: options.host, port: options.port });
  const address = app.server.address();
  const port = typeof address === "object" && address !== null ? address.port : options.port;
  const host = options.host.includes(":") ? `[${options.host}]` : options.host;
  return { app, url: `http://${host}:${port}/` };
}
