/*
 * The dashboard's small toolkit: element building, formatting, JSON fetching and chart
 * embedding. Browser-only; the chart library is loaded by the page from /vendor/.
 */

type Child = Node | string | number | null | undefined | false;
type Attributes = Record<string, string | number | boolean | null | undefined | ((event: Event) => void)>;

/** An element with attributes (`on…` keys become listeners) and children (strings become text). */
export function h<K extends keyof HTMLElementTagNameMap>(tag: K, attributes: Attributes = {}, ...children: Child[]): HTMLElementTagNameMap[K] {
  const element = document.createElement(tag);
  for (const [key, value] of Object.entries(attributes)) {
    if (value === null || value === undefined || value === false) continue;
    if (typeof value === "function") element.addEventListener(key.slice(2).toLowerCase(), value);
    else if (value === true) element.setAttribute(key, "");
    else element.setAttribute(key, String(value));
  }
  for (const child of children) {
    if (child === null || child === undefined || child === false) continue;
    element.append(typeof child === "object" ? child : String(child));
  }
  return element;
}

export function score(value: number | null | undefined, digits = 4): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : value.toFixed(digits);
}

export function seconds(value: number | null | undefined): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return "–";
  return value < 10 ? value.toFixed(2) : value.toFixed(0);
}

/** A duration for people: "42 s", "7 min", "3 h 20 min". */
export function duration(totalSeconds: number | null | undefined): string {
  if (totalSeconds === null || totalSeconds === undefined || !Number.isFinite(totalSeconds)) return "–";
  const s = Math.max(0, Math.round(totalSeconds));
  if (s < 90) return `${s} s`;
  const minutes = Math.round(s / 60);
  if (minutes < 90) return `${minutes} min`;
  return `${Math.floor(minutes / 60)} h ${minutes % 60} min`;
}

export function when(iso: string | null | undefined): string {
  if (!iso) return "–";
  const date = new Date(iso);
  return Number.isNaN(date.getTime()) ? iso : date.toLocaleString();
}

export function paramsText(params: Record<string, unknown>): string {
  return Object.entries(params)
    .map(([k, v]) => `${k}=${typeof v === "number" && !Number.isInteger(v) ? Number(v.toPrecision(3)) : JSON.stringify(v)}`)
    .join(" ");
}

export class ApiError extends Error {
  readonly status: number;
  constructor(status: number, message: string) {
    super(message);
    this.status = status;
  }
}

/** GET a JSON route of this server; an error answer becomes an ApiError with the server's message. */
export async function getJson<T>(path: string): Promise<T> {
  const response = await fetch(path, { headers: { accept: "application/json" }, credentials: "same-origin" });
  const body = (await response.json()) as unknown;
  if (!response.ok) {
    const message = body !== null && typeof body === "object" && "message" in body ? String((body as { message: unknown }).message) : response.statusText;
    throw new ApiError(response.status, message);
  }
  return body as T;
}

interface EmbedResult {
  readonly view: { finalize(): void };
}
type Embed = (element: HTMLElement, spec: unknown, options: Record<string, unknown>) => Promise<EmbedResult>;

const charts = new WeakMap<HTMLElement, EmbedResult>();

/**
 * Draws a Vega-Lite spec into `element`, replacing the chart drawn there before; `marks` is
 * about how many marks it has. Expressions
 * go through Vega's interpreter (`ast`), so the page needs no 'unsafe-eval'.
 */
export async function drawChart(element: HTMLElement, spec: unknown, marks = 0): Promise<void> {
  const embed = (globalThis as unknown as { vegaEmbed?: Embed }).vegaEmbed;
  if (embed === undefined) {
    element.textContent = "The chart library did not load.";
    return;
  }
  charts.get(element)?.view.finalize();
  // Thousands of points draw faster on a canvas; fewer stay crisp as SVG.
  const result = await embed(element, spec, { actions: false, renderer: marks > 2000 ? "canvas" : "svg", ast: true, tooltip: true });
  charts.set(element, result);
}

/** Runs `task` `ms` after the last of a burst of calls (a slider being dragged). */
export function debounce(task: () => void, ms: number): () => void {
  let timer: ReturnType<typeof setTimeout> | null = null;
  return () => {
    if (timer !== null) clearTimeout(timer);
    timer = setTimeout(() => {
      timer = null;
      task();
    }, ms);
  };
}

/**
 * Runs `task` once `ms` after the first of a burst of calls, however long the burst lasts (a busy
 * run sends events without pause; a debounce would wait for it to end).
 */
export function throttle(task: () => void, ms: number): () => void {
  let timer: ReturnType<typeof setTimeout> | null = null;
  return () => {
    timer ??= setTimeout(() => {
      timer = null;
      task();
    }, ms);
  };
}

export function panel(title: string, ...children: Child[]): HTMLElement {
  return h("section", { class: "panel" }, h("h2", {}, title), ...children);
}

/** A panel spanning `span` of the grid's three columns ("wide": the whole row). */
export function panelSpanning(span: "span-2" | "wide", title: string, ...children: Child[]): HTMLElement {
  return h("section", { class: `panel ${span}` }, h("h2", {}, title), ...children);
}

export function progressBar(fraction: number, label: string): HTMLElement {
  const bar = h("div", { class: "progress", role: "progressbar", "aria-valuemin": 0, "aria-valuemax": 100, "aria-valuenow": Math.round(fraction * 100) });
  const track = h("div", { class: "progress-track" }, h("div", { class: "progress-fill", style: `width: ${(Math.min(1, Math.max(0, fraction)) * 100).toFixed(1)}%` }));
  bar.append(track, h("span", { class: "progress-label" }, label));
  return bar;
}

/** Minutes without a new event after which a "running" run is flagged: its coordinator may have died. */
export const QUIET_MINUTES = 10;

/** A warning when a run says it is running but has written nothing for a while, or null. */
export function quietWarning(state: string, lastEventAt: string | null): HTMLElement | null {
  if (state !== "running" || lastEventAt === null) return null;
  const quietSeconds = (Date.now() - Date.parse(lastEventAt)) / 1000;
  if (!(quietSeconds > QUIET_MINUTES * 60)) return null;
  return h("span", { class: "quiet", title: "A fold job may simply be long; if the coordinator was stopped, run the plan again to resume." }, `nothing new for ${duration(quietSeconds)}`);
}

export function stateBadge(state: string): HTMLElement {
  return h("span", { class: `badge badge-${state}` }, state.replace("_", " "));
}
