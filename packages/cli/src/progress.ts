import type { Progress } from "@nightshift/coordinator";
import cliProgress from "cli-progress";

function duration(seconds: number | null): string {
  if (seconds === null || !Number.isFinite(seconds)) return "?";
  const s = Math.round(seconds);
  if (s < 60) return `${s}s`;
  if (s < 3600) return `${Math.floor(s / 60)}m${String(s % 60).padStart(2, "0")}s`;
  return `${Math.floor(s / 3600)}h${String(Math.floor((s % 3600) / 60)).padStart(2, "0")}m`;
}

/** A live progress bar on stderr: folds, trials, folds per second, best so far and an ETA. */
export function createProgressBar(metric: string): { update(p: Progress): void; stop(): void } {
  const bar = new cliProgress.SingleBar(
    {
      format: "{bar} {value}/{total} folds | trials {trials} | {rate} folds/s | best {best} | ETA {remaining}",
      stream: process.stderr,
      hideCursor: true,
      noTTYOutput: true,
      notTTYSchedule: 10_000,
      etaBuffer: 50,
    },
    cliProgress.Presets.shades_classic,
  );
  let started = false;
  return {
    update(p: Progress) {
      const payload = {
        trials: `${p.trialsFinished}/${p.trialsPlanned}`,
        rate: p.foldsPerSecond.toFixed(2),
        best: p.best ? `${metric} ${p.best.score.toFixed(4)} (trial ${p.best.trial})` : "-",
        remaining: duration(p.etaSeconds),
      };
      if (!started) {
        bar.start(p.foldsPlanned, p.foldsDone, payload);
        started = true;
      } else {
        bar.setTotal(p.foldsPlanned);
        bar.update(p.foldsDone, payload);
      }
    },
    stop() {
      if (started) bar.stop();
    },
  };
}
