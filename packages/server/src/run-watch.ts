import type { ServerResponse } from "node:http";
import { RunStore, type StoredEvent } from "@nightshift/store";
import { emptyActivity, foldEvents, type RunActivity } from "./run-activity.js";

const PAGE = 500;

/** One server-sent events stream of one client. */
interface Stream {
  readonly response: ServerResponse;
  /** Id of the last event sent to this client. */
  sent: number;
  readonly kinds: ReadonlySet<string> | null;
}

export interface WatchOptions {
  /** How often watched stores are read for new events, ms. */
  readonly pollMs: number;
  /** Streams open at once over every run; one more is refused. */
  readonly maxStreams: number;
  /** Bytes a slow client may leave unread before its stream is closed (it reconnects with Last-Event-ID). */
  readonly maxBufferedBytes: number;
  /** Runs whose event cursor and timeline are kept; the least recently used are dropped. */
  readonly maxRuns: number;
  /** A comment line is sent this often so proxies keep an idle stream open, ms. */
  readonly heartbeatMs: number;
}

export const DEFAULT_WATCH_OPTIONS: WatchOptions = { pollMs: 500, maxStreams: 200, maxBufferedBytes: 1 << 20, maxRuns: 32, heartbeatMs: 15_000 };

function frame(event: StoredEvent): string {
  return `id: ${event.id}\nevent: ${event.kind}\ndata: ${JSON.stringify(event)}\n\n`;
}

/**
 * The event log of one run as this server has read it: a cursor, the activity folded from it,
 * the clients streaming it, and one read-only connection to the store for all of it. Every stream of a run is fed from one read of the store, so
 * the cost of a poll does not grow with the number of clients, and a client costs only its
 * cursor and its socket's buffer (bounded: a client that falls behind is dropped).
 */
export class RunWatch {
  readonly folder: string;
  readonly activity: RunActivity = emptyActivity();
  private store: RunStore | null = null;
  private readonly streams = new Set<Stream>();
  private readonly maxBufferedBytes: number;

  constructor(folder: string, maxBufferedBytes: number) {
    this.folder = folder;
    this.maxBufferedBytes = maxBufferedBytes;
  }

  get streamCount(): number {
    return this.streams.size;
  }

  /** The watch's read-only connection to the run store, shared with the requests about this run. */
  reader(): RunStore {
    this.store ??= RunStore.open(this.folder, { readonly: true });
    return this.store;
  }

  /** Drops the connection (after an error); the next read opens a new one. */
  resetReader(): void {
    this.store?.close();
    this.store = null;
  }

  /** Reads the events committed since the last read (by any process), folds them in and sends them to every stream. */
  refresh(): void {
    const store = this.reader();
    for (;;) {
      const events = store.events(this.activity.lastId, PAGE);
      if (events.length === 0) break;
      foldEvents(this.activity, events);
      for (const stream of this.streams) this.send(stream, events);
      if (events.length < PAGE) break;
    }
  }

  private send(stream: Stream, events: readonly StoredEvent[]): void {
    let text = "";
    for (const event of events) {
      if (event.id <= stream.sent) continue;
      stream.sent = event.id;
      if (stream.kinds === null || stream.kinds.has(event.kind)) text += frame(event);
    }
    if (text.length > 0) this.write(stream, text);
  }

  private write(stream: Stream, text: string): void {
    if (stream.response.writableEnded) return;
    stream.response.write(text);
    if (stream.response.writableLength > this.maxBufferedBytes) this.drop(stream);
  }

  private drop(stream: Stream): void {
    this.streams.delete(stream);
    if (!stream.response.writableEnded) stream.response.end();
  }

  /**
   * Adds a client: it first gets the stored events after `after` (those already read by this
   * watch come from the store again, page by page), then every new one as it is read.
   */
  subscribe(response: ServerResponse, after: number, kinds: ReadonlySet<string> | null): void {
    this.refresh();
    const stream: Stream = { response, sent: after, kinds };
    const store = this.reader();
    while (stream.sent < this.activity.lastId && !response.writableEnded) {
      const events = store.events(stream.sent, PAGE).filter((e) => e.id <= this.activity.lastId);
      if (events.length === 0) break;
      this.send(stream, events);
    }
    if (response.writableEnded) return;
    this.streams.add(stream);
    response.on("close", () => this.streams.delete(stream));
  }

  heartbeat(): void {
    for (const stream of this.streams) this.write(stream, ": keep-alive\n\n");
  }

  close(): void {
    for (const stream of [...this.streams]) this.drop(stream);
    this.store?.close();
    this.store = null;
  }
}

/** The runs being watched by one server, with one timer for all of them. */
export class RunWatches {
  readonly options: WatchOptions;
  private readonly watches = new Map<string, RunWatch>();
  private timer: NodeJS.Timeout | null = null;
  private sinceHeartbeat = 0;

  constructor(options: Partial<WatchOptions> = {}) {
    this.options = { ...DEFAULT_WATCH_OPTIONS, ...options };
  }

  /** The watch of a run folder (created on first use), read up to the latest event. */
  watch(folder: string): RunWatch {
    let watch = this.watches.get(folder);
    if (watch) {
      this.watches.delete(folder);
    } else {
      watch = new RunWatch(folder, this.options.maxBufferedBytes);
    }
    this.watches.set(folder, watch);
    this.evict();
    watch.refresh();
    return watch;
  }

  private evict(): void {
    if (this.watches.size <= this.options.maxRuns) return;
    for (const [folder, watch] of this.watches) {
      if (this.watches.size <= this.options.maxRuns) break;
      if (watch.streamCount > 0) continue;
      watch.close();
      this.watches.delete(folder);
    }
  }

  get streamCount(): number {
    let n = 0;
    for (const watch of this.watches.values()) n += watch.streamCount;
    return n;
  }

  /** Whether one more stream may open. */
  hasRoom(): boolean {
    return this.streamCount < this.options.maxStreams;
  }

  /** Starts streaming a run to a client; the timer runs only while some stream is open. */
  stream(folder: string, response: ServerResponse, after: number, kinds: ReadonlySet<string> | null): void {
    this.watch(folder).subscribe(response, after, kinds);
    response.on("close", () => this.stopWhenIdle());
    this.timer ??= setInterval(() => this.tick(), this.options.pollMs);
  }

  private tick(): void {
    this.sinceHeartbeat += this.options.pollMs;
    const heartbeat = this.sinceHeartbeat >= this.options.heartbeatMs;
    if (heartbeat) this.sinceHeartbeat = 0;
    for (const watch of this.watches.values()) {
      if (watch.streamCount === 0) continue;
      try {
        watch.refresh();
      } catch {
        // A run folder removed or a store busy beyond its timeout: its clients reconnect and resume by id.
        watch.close();
      }
      if (heartbeat) watch.heartbeat();
    }
    this.stopWhenIdle();
  }

  private stopWhenIdle(): void {
    if (this.timer !== null && this.streamCount === 0) {
      clearInterval(this.timer);
      this.timer = null;
    }
  }

  close(): void {
    if (this.timer !== null) clearInterval(this.timer);
    this.timer = null;
    for (const watch of this.watches.values()) watch.close();
    this.watches.clear();
  }
}
