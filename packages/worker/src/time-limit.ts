/**
 * The words of a fold job stopped at its time limit (the plan's trial_minutes spread over
 * the folds). Local threads and queue workers say it the same way, so the board and the
 * run store read the same wherever the job ran; the scheduler records an error starting
 * with "timed out" as a timed-out trial.
 */
export function timeLimitMessage(seconds: number): string {
  return `stopped after ${seconds.toFixed(0)} s (the plan's trial_minutes limit)`;
}
