/** Kinds of stored events that change what a page shows. */
export const CHANGING_KINDS = [
  "fold_done",
  "trial_done",
  "trial_failed",
  "new_best",
  "halving",
  "run_started",
  "run_resumed",
  "run_finished",
  "run_stopped",
  // The final step: ensembles stored, the hold-out opened.
  "ensembles_built",
  "holdout_opened",
  "final_step",
];

/**
 * Follows a run's server-sent events from `after` and calls `onChange` for each; reports
 * whether the stream is connected. EventSource reconnects by itself with the last id it saw.
 */
export function followRun(runId: string, after: number, onChange: (kind: string) => void, onState: (connected: boolean) => void): () => void {
  const source = new EventSource(`/api/runs/${encodeURIComponent(runId)}/events?after=${after}&kinds=${CHANGING_KINDS.join(",")}`);
  for (const kind of CHANGING_KINDS) source.addEventListener(kind, () => onChange(kind));
  source.onopen = () => onState(true);
  source.onerror = () => onState(false);
  return () => {
    source.close();
    onState(false);
  };
}
