import { spawnSync } from "node:child_process";
import { EventEmitter } from "node:events";
import { get as httpGet, type IncomingMessage, type ServerResponse } from "node:http";
import { join, resolve } from "node:path";
import { RunStore } from "@nightshift/store";
import type { FastifyInstance } from "fastify";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createServer, startServer } from "../src/http-server.js";
import { RunListSchema } from "../src/schemas.js";
import { RunWatch } from "../src/run-watch.js";
import { tempDir } from "./run-fixture.js";

const REPO = resolve(__dirname, "../../..");

interface Frame {
  id: number;
  event: string;
  data: { id: number; kind: string; data: Record<string, unknown> };
}

/** A store with the meta of a started run, as the coordinator leaves it, and two events. */
function startedStore(runsDir: string, id: string): string {
  const folder = join(runsDir, id);
  const store = RunStore.open(folder, { create: true });
  store.initMeta({ run_id: id, metric: "average_precision", direction: "max", task: "binary", fold_count: "3", test_fraction: "0.5", state: "running", created_at: "2026-12-01T22:00:00.000Z" });
  store.addTrials([{ trial: 0, family: "tree", params: { depth: 3 } }]);
  store.addEvent("run_started", { run: id, trials: 1, folds: 3 });
  store.addEvent("fold_done", { trial: 0, fold: 0, score: 0.5, error: null });
  store.close();
  return folder;
}

/** Appends events from another process, as a coordinator does while the server reads. */
function writeEventsElsewhere(folder: string, events: Array<{ kind: string; data: Record<string, unknown> }>): void {
  const script = `import { RunStore } from "@nightshift/store";
    const store = RunStore.open(${JSON.stringify(folder)});
    for (const e of ${JSON.stringify(events)}) store.addEvent(e.kind, e.data);
    store.close();`;
  const r = spawnSync(process.execPath, ["--input-type=module", "-e", script], { cwd: REPO, encoding: "utf8" });
  if (r.status !== 0) throw new Error(r.stderr);
}

/** Reads a server-sent events stream, frame by frame. */
class EventStream {
  readonly frames: Frame[] = [];
  private readonly waiters: Array<() => void> = [];
  response!: IncomingMessage;
  private request!: ReturnType<typeof httpGet>;

  static open(url: string, headers: Record<string, string> = {}): Promise<EventStream> {
    const stream = new EventStream();
    return new Promise((done, fail) => {
      stream.request = httpGet(url, { headers }, (response) => {
        stream.response = response;
        let buffer = "";
        response.setEncoding("utf8");
        response.on("data", (chunk: string) => {
          buffer += chunk;
          let end: number;
          while ((end = buffer.indexOf("\n\n")) >= 0) {
            const text = buffer.slice(0, end);
            buffer = buffer.slice(end + 2);
            const fields = Object.fromEntries(text.split("\n").filter((l) => !l.startsWith(":")).map((l) => [l.slice(0, l.indexOf(":")), l.slice(l.indexOf(":") + 1).trim()]));
            if (fields.data !== undefined) stream.frames.push({ id: Number(fields.id), event: fields.event, data: JSON.parse(fields.data) });
            for (const wake of stream.waiters.splice(0)) wake();
          }
        });
        done(stream);
      });
      stream.request.on("error", fail);
    });
  }

  /** Resolves once `count` frames have arrived (no fixed sleep: it wakes on each frame). */
  async until(count: number, timeoutMs = 10_000): Promise<Frame[]> {
    const deadline = Date.now() + timeoutMs;
    while (this.frames.length < count) {
      if (Date.now() > deadline) throw new Error(`only ${this.frames.length} of ${count} events arrived`);
      await new Promise<void>((wake) => {
        this.waiters.push(wake);
        setTimeout(wake, 200);
      });
    }
    return this.frames;
  }

  close(): void {
    this.request.destroy();
  }
}

describe("GET /api/runs/:id/events", () => {
  let runsDir: string;
  let folder: string;
  let app: FastifyInstance;
  let base: string;

  beforeAll(async () => {
    runsDir = tempDir("events");
    folder = startedStore(runsDir, "live-run");
    const started = await startServer({ runsDir, host: "127.0.0.1", port: 0, watch: { pollMs: 50, maxStreams: 2 } });
    app = started.app;
    base = `${started.url}api/runs/live-run/events`;
  });

  afterAll(async () => {
    await app?.close();
  });

  it("streams the stored events, then those another process writes while the client listens", async () => {
    const stream = await EventStream.open(`${base}?after=0`);
    expect(stream.response.statusCode).toBe(200);
    expect(stream.response.headers["content-type"]).toMatch(/^text\/event-stream/);
    const backlog = await stream.until(2);
    expect(backlog.map((f) => [f.id, f.event])).toEqual([
      [1, "run_started"],
      [2, "fold_done"],
    ]);
    writeEventsElsewhere(folder, [
      { kind: "trial_done", data: { trial: 0, family: "tree", score: 0.52 } },
      { kind: "new_best", data: { trial: 0, score: 0.52 } },
    ]);
    const frames = await stream.until(4);
    expect(frames.slice(2).map((f) => [f.id, f.event, f.data.data.score])).toEqual([
      [3, "trial_done", 0.52],
      [4, "new_best", 0.52],
    ]);
    stream.close();
  });

  it("resumes after Last-Event-ID, and sends only the kinds asked for", async () => {
    const resumed = await EventStream.open(base, { "last-event-id": "3" });
    const onlyBest = await EventStream.open(`${base}?kinds=new_best,run_finished`);
    writeEventsElsewhere(folder, [
      { kind: "halving", data: { batch: 0, rung: 0, promoted: [0], dropped: [] } },
      { kind: "run_finished", data: { run: "live-run", stoppedBy: "finished", foldsRun: 3 } },
    ]);
    expect((await resumed.until(3)).map((f) => f.id)).toEqual([4, 5, 6]);
    expect((await onlyBest.until(2)).map((f) => f.event)).toEqual(["new_best", "run_finished"]);
    resumed.close();
    onlyBest.close();
  });

  it("refuses a stream beyond the limit with 503 and takes new ones once others close", async () => {
    const a = await EventStream.open(base);
    const b = await EventStream.open(base);
    await a.until(1);
    await b.until(1);
    const refused = await EventStream.open(base);
    expect(refused.response.statusCode).toBe(503);
    a.close();
    b.close();
    let status = 503;
    for (let attempt = 0; attempt < 50 && status === 503; attempt++) {
      const again = await EventStream.open(base);
      status = again.response.statusCode ?? 0;
      again.close();
      if (status === 503) await new Promise((wake) => setTimeout(wake, 20));
    }
    expect(status).toBe(200);
  });
});

describe("a running run in the run list", () => {
  it("has a pace and an ETA from the fold jobs committed since it started", async () => {
    const runsDir = tempDir("pace");
    const folder = startedStore(runsDir, "paced-run");
    const store = RunStore.open(folder, { readonly: true });
    const startedAt = Date.parse(store.events(0, 1)[0].at);
    store.close();
    const app = await createServer({ runsDir, clock: () => startedAt + 30_000 });
    try {
      const list = RunListSchema.parse(JSON.parse((await app.inject({ method: "GET", url: "/api/runs" })).body));
      // One fold job in the 30 s since the start; the one queued trial needs 3 folds, none stored yet.
      expect(list.runs[0]).toMatchObject({ id: "paced-run", state: "running", last_event_id: 2 });
      expect(list.runs[0].progress).toMatchObject({ folds_done: 0, folds_planned: 3, running_s: 30 });
      expect(list.runs[0].progress.folds_per_s).toBeCloseTo(1 / 30, 12);
      expect(list.runs[0].progress.eta_s).toBeCloseTo(90, 9);
    } finally {
      await app.close();
    }
  });
});

describe("stopping the server", () => {
  it("ends the open event streams instead of waiting for them forever", async () => {
    const runsDir = tempDir("closing");
    startedStore(runsDir, "closing-run");
    const { app, url } = await startServer({ runsDir, host: "127.0.0.1", port: 0 });
    const stream = await EventStream.open(`${url}api/runs/closing-run/events`);
    await stream.until(2);
    const ended = new Promise<void>((done) => stream.response.on("end", done));
    await app.close();
    await ended;
  });
});

/** Enough of a ServerResponse for a watch: it records writes and never drains. */
class StalledResponse extends EventEmitter {
  written = 0;
  writableEnded = false;
  write(text: string): boolean {
    this.written += text.length;
    return false;
  }
  get writableLength(): number {
    return this.written;
  }
  end(): void {
    this.writableEnded = true;
    this.emit("close");
  }
}

describe("RunWatch", () => {
  it("drops a client that stops reading instead of buffering without bound", () => {
    const folder = startedStore(tempDir("stalled"), "stalled-run");
    const writer = RunStore.open(folder);
    const watch = new RunWatch(folder, 4096);
    const slow = new StalledResponse();
    watch.subscribe(slow as unknown as ServerResponse, 0, null);
    expect(watch.streamCount).toBe(1);
    for (let i = 0; i < 100; i++) writer.addEvent("fold_done", { trial: 0, fold: i, score: 0.5, error: null, padding: "x".repeat(100) });
    watch.refresh();
    expect(slow.writableEnded).toBe(true);
    expect(watch.streamCount).toBe(0);
    expect(slow.written).toBeLessThan(4096 + 100 * 400);
    // The watch still follows the log for the other views.
    expect(watch.activity.lastId).toBe(102);
    expect(watch.activity.foldsSinceStart).toBe(101);
    watch.close();
    writer.close();
  });
});
