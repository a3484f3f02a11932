/**
 * Progress on stderr for long runs: a cli-progress bar with ETA on a terminal; on a pipe, one line per 10 %
 * after the first few seconds. Silent when quiet (e.g. --json asks for clean stdout, but stderr still gets
 * progress unless --quiet).
 */
import cliProgress from 'cli-progress';

/** runs shorter than this never show progress (common practice: avoid flicker) */
export const PROGRESS_DELAY_S = 1.5;
/** no ETA is extrapolated from less of the work than this (common practice: the early rate is noise) */
const ETA_MIN_FRACTION = 0.05;

export interface Progress {
  update(fraction: number): void;
  stop(): void;
}

export function makeProgress(label: string, quiet: boolean): Progress {
  if (quiet) return { update() {}, stop() {} };
  const started = performance.now();
  const tty = process.stderr.isTTY === true;
  let bar: cliProgress.SingleBar | null = null;
  let lastDecile = -1;
  return {
    update(fraction: number) {
      const elapsed = (performance.now() - started) / 1000;
      if (elapsed < PROGRESS_DELAY_S) return;
      const f = Math.min(1, Math.max(0, fraction));
      if (tty) {
        if (!bar) {
          bar = new cliProgress.SingleBar(
            { format: `${label} [{bar}] {percentage}% | ETA {eta_formatted} | {duration_formatted}`, stream: process.stderr, hideCursor: true },
            cliProgress.Presets.shades_classic,
          );
          bar.start(1000, 0);
        }
        bar.update(Math.round(f * 1000));
      } else {
        const decile = Math.floor(f * 10);
        if (decile > lastDecile) {
          lastDecile = decile;
          const eta = f >= ETA_MIN_FRACTION ? (elapsed * (1 - f)) / f : NaN;
          process.stderr.write(`${label}: ${Math.round(f * 100)}% after ${elapsed.toFixed(1)} s, ETA ${Number.isFinite(eta) ? eta.toFixed(1) + ' s' : '?'}\n`);
        }
      }
    },
    stop() {
      if (bar) bar.stop();
    },
  };
}

/** one progress display per stage of a multi-stage job: a new one starts when the stage changes */
export function makeStagedProgress(quiet: boolean): { update(stage: string, fraction: number): void; stop(): void } {
  let current: { stage: string; progress: Progress } | null = null;
  return {
    update(stage, fraction) {
      if (current?.stage !== stage) {
        current?.progress.stop();
        current = { stage, progress: makeProgress(stage, quiet) };
      }
      current.progress.update(fraction);
    },
    stop() {
      current?.progress.stop();
    },
  };
}
