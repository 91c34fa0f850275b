import { isIP } from "node:net";
import { InputError } from "@nightshift/core";
import type { ConnectionOptions } from "bullmq";
import { Redis, type RedisOptions } from "ioredis";
import { reconnectDelayMs } from "./redis-watch.js";

/** Where a Redis is, read from a `redis://` or `rediss://` (TLS) URL. */
export interface RedisEndpoint {
  /** Connection options for ioredis and BullMQ; the password stays in here only. */
  readonly options: RedisOptions;
  /** The URL without its password, for messages and logs. */
  readonly label: string;
}

const URL_FORM = "redis://[[user]:password@]host[:port][/db], or rediss://... for TLS";

/**
 * Reads a Redis URL. Commands wait for a lost connection to come back instead of failing
 * (`maxRetriesPerRequest: null`, which BullMQ's blocking connections require): a Redis
 * restart during a night's run pauses the run, it does not fail its jobs. A lost connection
 * is tried again after 1, 2, 4 s, then every 4 s (`reconnectDelayMs`; BullMQ's own default
 * would wait up to 20 s), so the run goes on within seconds of Redis coming back.
 */
export function redisEndpoint(url: string, where = "--redis"): RedisEndpoint {
  let parsed: URL;
  try {
    parsed = new URL(url);
  } catch {
    throw new InputError(where, `'${url}' is not a URL; expected ${URL_FORM}`);
  }
  if (parsed.protocol !== "redis:" && parsed.protocol !== "rediss:") throw new InputError(where, `unsupported scheme '${parsed.protocol}'; expected ${URL_FORM}`);
  if (parsed.hostname === "") throw new InputError(where, `no host in the URL; expected ${URL_FORM}`);
  if (parsed.search !== "" || parsed.hash !== "") throw new InputError(where, `the URL takes no query or fragment; expected ${URL_FORM}`);
  const dbText = parsed.pathname.replace(/^\//, "");
  if (dbText !== "" && !/^\d{1,5}$/.test(dbText)) throw new InputError(where, `'/${dbText}' is not a database number; expected ${URL_FORM}`);
  const host = parsed.hostname.replace(/^\[|\]$/g, "");
  const port = parsed.port === "" ? 6379 : Number(parsed.port);
  const tls = parsed.protocol === "rediss:";
  const username = decodeURIComponent(parsed.username);
  const password = decodeURIComponent(parsed.password);
  const options: RedisOptions = {
    host,
    port,
    ...(username !== "" ? { username } : {}),
    ...(password !== "" ? { password } : {}),
    ...(dbText !== "" ? { db: Number(dbText) } : {}),
    // Certificates are checked against the host name; a private certificate authority is
    // trusted through NODE_EXTRA_CA_CERTS, never by turning verification off.
    ...(tls ? { tls: isIP(host) === 0 ? { servername: host } : {} } : {}),
    maxRetriesPerRequest: null,
    retryStrategy: (times: number) => reconnectDelayMs(times - 1),
  };
  const auth = username !== "" || password !== "" ? `${username}${password !== "" ? ":***" : ""}@` : "";
  const label = `${parsed.protocol}//${auth}${parsed.host}${dbText !== "" ? `/${dbText}` : ""}`;
  return { options, label };
}

/** The endpoint as BullMQ takes it (its own copy of ioredis' option type, hence the cast). */
export function queueConnection(endpoint: RedisEndpoint): ConnectionOptions {
  return endpoint.options as ConnectionOptions;
}

const TLS_CODES = /CERT|SSL|TLS|SELF_SIGNED|UNABLE_TO_VERIFY/;

/** One clear sentence for a failed connection: what went wrong and what to change. */
export function connectionProblem(endpoint: RedisEndpoint, error: unknown): string {
  const message = error instanceof Error ? error.message : String(error);
  const code = (error as { code?: unknown } | null)?.code;
  const at = endpoint.label;
  if (/WRONGPASS|invalid password|invalid username-password/i.test(message)) return `${at}: Redis refused the user name or password in the URL (${message.trim()})`;
  if (/NOAUTH/i.test(message)) return `${at}: this Redis needs a password; put it in the URL: redis://:PASSWORD@host:port (rediss:// for TLS)`;
  if (code === "ECONNREFUSED") return `${at}: connection refused; is Redis running there, and is the port right?`;
  if (code === "ENOTFOUND" || code === "EAI_AGAIN") return `${at}: unknown host`;
  if (code === "ETIMEDOUT" || /timed? ?out/i.test(message))
    return `${at}: no answer in time; check the host, the port and any firewall between${endpoint.options.tls ? ", and that the server speaks TLS on this port (the URL says rediss://)" : ""}`;
  if ((typeof code === "string" && TLS_CODES.test(code)) || /certificate|SSL|TLS/i.test(message))
    return `${at}: TLS failed (${typeof code === "string" ? `${code}: ` : ""}${message}); for a private certificate authority, point NODE_EXTRA_CA_CERTS at its certificate`;
  if (code === "ECONNRESET" || /Connection is closed/i.test(message))
    return `${at}: the server closed the connection at once; does it speak TLS (rediss://) where the URL says redis://, or the reverse?`;
  return `${at}: ${message}`;
}

/**
 * Connects once, authenticates and pings, so a wrong URL or password is one clear message
 * at start (an InputError: exit 2) before any run store or queue is touched.
 */
export async function checkRedis(endpoint: RedisEndpoint, where = "--redis", timeoutMs = 5000): Promise<void> {
  const client = new Redis({ ...endpoint.options, lazyConnect: true, enableReadyCheck: false, disconnectTimeout: 50, maxRetriesPerRequest: 0, enableOfflineQueue: false, retryStrategy: () => null, connectTimeout: timeoutMs });
  let lastError: unknown;
  client.on("error", (error: unknown) => {
    lastError = error;
  });
  try {
    await client.connect();
    await client.ping();
  } catch (error) {
    // ioredis may reject with a generic "connection closed" while the real cause (a refused
    // password, say) is emitted as an error event, just before or just after.
    const generic = /Connection is closed|Stream isn't writeable/i.test(error instanceof Error ? error.message : "");
    if (generic && lastError === undefined) await new Promise((r) => setTimeout(r, 100));
    const cause = generic && lastError !== undefined ? lastError : error;
    throw new RedisConnectionError(where, connectionProblem(endpoint, cause), isOutOfReach(cause));
  } finally {
    client.disconnect();
  }
}

/** A failed connection check: bad input (exit 2), but one that may pass later when `outOfReach`. */
export class RedisConnectionError extends InputError {
  constructor(
    where: string,
    message: string,
    /** Nothing answered (refused, timed out, no route): Redis may be starting or the network down, unlike a refused password or a TLS mismatch. */
    readonly outOfReach: boolean,
  ) {
    super(where, message);
  }
}

function isOutOfReach(error: unknown): boolean {
  const code = (error as { code?: unknown } | null)?.code;
  const message = error instanceof Error ? error.message : String(error);
  return (typeof code === "string" && ["ECONNREFUSED", "ETIMEDOUT", "EHOSTUNREACH", "ENETUNREACH", "EAI_AGAIN"].includes(code)) || (code === undefined && /timed? ?out/i.test(message));
}

/** Waits between start-up checks: 1, 2, 4, 8, 16, then every 30 s. */
export function startupRetryDelay(attempt: number): number {
  return Math.min(30, 2 ** attempt) * 1000;
}

/**
 * `checkRedis` until Redis answers, for a service started before its Redis (a worker on a box
 * that boots faster): while nothing answers, says so through `log` with the next try's delay;
 * a problem that waiting cannot mend (a password, TLS, an unknown host) is thrown at once.
 */
export async function waitForRedis(endpoint: RedisEndpoint, where: string, log: (line: string) => void, sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms))): Promise<void> {
  const since = Date.now();
  for (let attempt = 0; ; attempt++) {
    try {
      await checkRedis(endpoint, where);
      if (attempt > 0) log(`${where}: Redis at ${endpoint.label} answered after ${Math.round((Date.now() - since) / 1000)} s`);
      return;
    } catch (error) {
      if (!(error instanceof RedisConnectionError) || !error.outOfReach) throw error;
      const delay = startupRetryDelay(attempt);
      log(`${error.message}; waiting for it (next try in ${delay / 1000} s, Ctrl-C to stop)`);
      await sleep(delay);
    }
  }
}
