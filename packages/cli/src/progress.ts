import type { Progress } from "@nightshift/coordinator";
import cliProgress from "cli-progress";

function duration(seconds: number | null): string {
  if (seconds === null || !Number.isFinite(seconds)) return "?";
  const s = Math.round(seconds);
  if (s < 60) return `${s}s`;
  if (s < 3600) return `${Math.floor(s / 60)}m${String(s % 60).padStart(2, "0")}s`;
  return `${Math.floor(s / 3600)}h${String(Math.floor((s % 3600) / 60)).padStart(2, "0")}m`;
}

/**
 * A live progress bar on stderr: folds, trials, folds per second, best so far and an ETA,
 * and a note when something holds the run up (Redis unreachable, say).
 */
export function createProgressBar(metric: string): { update(p: Progress): void; note(text: string | null): void; log(line: string): void; stop(): void } {
  const bar = new cliProgress.SingleBar(
    {
      format: "{bar} {value}/{total} folds | trials {trials} | {rate} folds/s | best {best} | ETA {remaining}{note}",
      stream: process.stderr,
      hideCursor: true,
      noTTYOutput: true,
      notTTYSchedule: 10_000,
      etaBuffer: 50,
      // Drawn again at every frame, so a line written above it (`log`) does not leave it half gone.
      forceRedraw: true,
    },
    cliProgress.Presets.shades_classic,
  );
  let started = false;
  let note = "";
  return {
    update(p: Progress) {
      const payload = {
        note,
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
    note(text: string | null) {
      note = text === null ? "" : ` | ${text}`;
      if (started) bar.update({ note });
    },
    /** A line above the bar: on a terminal the bar's line is cleared first, and the next frame draws the bar below. */
    log(line: string) {
      process.stderr.write(started && process.stderr.isTTY ? `\r\x1b[2K${line}\n` : `${line}\n`);
    },
    stop() {
      if (started) bar.stop();
    },
  };
}
