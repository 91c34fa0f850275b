import type { StoredEvent } from "@nightshift/store";
import type { TimelinePoint } from "./schemas.js";

/** What a run's event log says about its pace and its finished trials, folded event by event. */
export interface RunActivity {
  /** Id of the last event folded in. */
  lastId: number;
  lastEventAt: string | null;
  /** When the run last started or resumed. */
  lastStartAt: string | null;
  /** Fold jobs committed since then. */
  foldsSinceStart: number;
  /** Finished trials in the order they finished. */
  readonly timeline: TimelinePoint[];
}

export function emptyActivity(): RunActivity {
  return { lastId: 0, lastEventAt: null, lastStartAt: null, foldsSinceStart: 0, timeline: [] };
}

function numberOrNull(value: unknown): number | null {
  return typeof value === "number" && Number.isFinite(value) ? value : null;
}

/** Folds newer events (ascending ids) into `activity`. */
export function foldEvents(activity: RunActivity, events: readonly StoredEvent[]): void {
  for (const event of events) {
    if (event.id <= activity.lastId) continue;
    activity.lastId = event.id;
    activity.lastEventAt = event.at;
    switch (event.kind) {
      case "run_started":
      case "run_resumed":
        activity.lastStartAt = event.at;
        activity.foldsSinceStart = 0;
        break;
      case "fold_done":
        activity.foldsSinceStart++;
        break;
      case "trial_done": {
        const trial = numberOrNull(event.data.trial);
        if (trial === null) break;
        activity.timeline.push({ at: event.at, trial, family: String(event.data.family ?? ""), score: numberOrNull(event.data.score) });
        break;
      }
      default:
        break;
    }
  }
}
