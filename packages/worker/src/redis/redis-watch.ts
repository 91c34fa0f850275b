import { Redis } from "ioredis";
import type { RedisEndpoint } from "./redis-url.js";

/**
 * The wait before reconnection attempt `attempt` (0 first): 1, 2, 4 s, then every 4 s.
 * Every connection to Redis (ioredis' `retryStrategy`, BullMQ's included) and the watch
 * below wait this long, so a Redis back from an outage is used again within 4 s.
 */
export function reconnectDelayMs(attempt: number): number {
  return Math.min(4000, 1000 * 2 ** Math.max(0, attempt));
}

/** How long a probe waits for PONG before it calls Redis unreachable (a hung server accepts connections but never answers). */
const PROBE_TIMEOUT_MS = 3000;
/** Probes of a healthy Redis. */
const HEALTHY_EVERY_MS = 2000;
/** Each try is told for the first minute of an outage, then once a minute. */
const TELL_EVERY_TRY_MS = 60_000;

export interface RedisWatch {
  /** False from the first failed probe until one succeeds again. */
  readonly reachable: boolean;
  /** When a probe last failed (ms since the epoch), if ever. */
  readonly troubleAt: number | undefined;
  stop(): void;
}

/**
 * Watches one Redis on a connection of its own and says when it stops answering and when
 * it answers again, so a user watching a stalled run or an idle worker knows why:
 *
 *   Redis at 127.0.0.1:6379 unreachable since 01:02:03 (connection refused), retrying (next try in 4 s)
 *   Redis at 127.0.0.1:6379 reachable again after 31 s
 *
 * A refused connection fails at once; a hung server (connections open, nothing answers) is
 * noticed when a PING gets no answer within 3 s. The watch only tells: the connections
 * that do the work wait and reconnect on their own (`reconnectDelayMs`). `onChange` hears
 * each change (since when Redis is unreachable, or null once it answers), for a status line.
 */
export function watchRedis(endpoint: RedisEndpoint, tell: (message: string) => void, onChange?: (unreachableSince: Date | null) => void): RedisWatch {
  const at = `${endpoint.options.host?.includes(":") ? `[${endpoint.options.host}]` : endpoint.options.host}:${endpoint.options.port}`;
  let client: Redis | undefined;
  let since: number | undefined;
  let troubleAt: number | undefined;
  let lastTold = 0;
  let attempt = 0;
  let stopped = false;
  let timer: NodeJS.Timeout | undefined;

  const drop = (): void => {
    client?.disconnect();
    client = undefined;
  };

  /** Undefined when Redis answered, else why not. */
  const probe = async (): Promise<string | undefined> => {
    let timeout: NodeJS.Timeout | undefined;
    // ioredis rejects a failed connect with a generic "Connection is closed"; the cause comes as an error event.
    let cause: unknown;
    try {
      if (!client) {
        client = new Redis({
          ...endpoint.options,
          lazyConnect: true,
          enableReadyCheck: false,
          enableOfflineQueue: false,
          maxRetriesPerRequest: 0,
          retryStrategy: () => null,
          connectTimeout: PROBE_TIMEOUT_MS,
          connectionName: "nightshift-watch",
        });
        client.on("error", (error: unknown) => (cause ??= error));
        const connecting = client;
        await Promise.race([
          connecting.connect(),
          new Promise((_, fail) => (timeout = setTimeout(() => fail(new Error(`no answer within ${PROBE_TIMEOUT_MS / 1000} s`)), PROBE_TIMEOUT_MS))),
        ]);
        clearTimeout(timeout);
      }
      const pinging = client;
      await Promise.race([pinging.ping(), new Promise((_, fail) => (timeout = setTimeout(() => fail(new Error(`no answer within ${PROBE_TIMEOUT_MS / 1000} s`)), PROBE_TIMEOUT_MS)))]);
      return undefined;
    } catch (error) {
      drop();
      const seen = cause ?? error;
      const code = (seen as { code?: unknown } | null)?.code;
      if (code === "ECONNREFUSED") return "connection refused";
      if (/Connection is closed/i.test(seen instanceof Error ? seen.message : "")) return "connection lost";
      return seen instanceof Error ? seen.message : String(seen);
    } finally {
      clearTimeout(timeout);
    }
  };

  const tick = async (): Promise<void> => {
    const started = Date.now();
    const problem = await probe();
    if (stopped) return;
    let wait: number;
    if (problem === undefined) {
      if (since !== undefined) {
        tell(`Redis at ${at} reachable again after ${Math.round((Date.now() - since) / 1000)} s`);
        onChange?.(null);
      }
      since = undefined;
      attempt = 0;
      wait = HEALTHY_EVERY_MS;
    } else {
      troubleAt = Date.now();
      if (since === undefined) {
        since = started;
        onChange?.(new Date(since));
      }
      wait = reconnectDelayMs(attempt++);
      const now = Date.now();
      if (now - since < TELL_EVERY_TRY_MS || now - lastTold >= TELL_EVERY_TRY_MS) {
        lastTold = now;
        tell(`Redis at ${at} unreachable since ${clock(since)} (${problem}), retrying (next try in ${Math.round(wait / 1000)} s)`);
      }
    }
    timer = setTimeout(() => void tick(), wait);
    timer.unref();
  };

  timer = setTimeout(() => void tick(), 0);
  timer.unref();
  return {
    get reachable() {
      return since === undefined;
    },
    get troubleAt() {
      return troubleAt;
    },
    stop() {
      stopped = true;
      clearTimeout(timer);
      drop();
    },
  };
}

/** Local wall-clock time, hh:mm:ss. */
export function clock(ms: number): string {
  const d = new Date(ms);
  return [d.getHours(), d.getMinutes(), d.getSeconds()].map((n) => String(n).padStart(2, "0")).join(":");
}

/** Connection errors the watch tells about already (the rest are news of their own). */
export function isConnectionError(error: Error): boolean {
  const code = (error as { code?: unknown }).code;
  return (
    (typeof code === "string" && ["ECONNREFUSED", "ECONNRESET", "ETIMEDOUT", "EPIPE", "EHOSTUNREACH", "ENETUNREACH", "ENOTFOUND", "EAI_AGAIN"].includes(code)) ||
    /Connection is closed|ECONNREFUSED|ECONNRESET|Stream isn't writeable|connect ETIMEDOUT/i.test(error.message)
  );
}
