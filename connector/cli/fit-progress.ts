/**
 * Training progress on stderr. On a terminal, one line redrawn in place (`\r`, then ANSI "erase
 * line") with a bar; elsewhere (logs, CI) one line every few epochs, as text or JSON. Nothing at
 * all when quiet.
 */
import type { EpochReport } from '../../model/vae/index.js';

/** `terminal` carries the terminal's width: a redrawn line must not wrap. */
export type ProgressStyle = { readonly kind: 'terminal'; readonly columns: number } | { readonly kind: 'text' | 'json' | 'quiet' };

/** Lines written when not on a terminal, at most about this many per run (plus the last epoch). */
const LOGGED_LINES = 20;
const BAR_WIDTH = 16;
const ERASE_LINE = '\r\u001b[2K';

export interface FitProgress {
  epoch(report: EpochReport): void;
  /** Ends the display: writes the last epoch if it was not written, and ends the terminal line. */
  finish(): void;
}

export function fitProgress(style: ProgressStyle, write: (text: string) => void): FitProgress {
  let last: EpochReport | undefined;
  let lastWritten: EpochReport | undefined;
  const log = (report: EpochReport) => {
    lastWritten = report;
    write(style.kind === 'json' ? `${JSON.stringify(jsonLine(report))}\n` : `${describeEpoch(report)}\n`);
  };
  return {
    epoch(report) {
      last = report;
      if (style.kind === 'quiet') return;
      if (style.kind === 'terminal') {
        write(`${ERASE_LINE}${`${bar(report)} ${describeEpoch(report)}`.slice(0, Math.max(1, style.columns - 1))}`);
        return;
      }
      const every = Math.max(1, Math.ceil(report.epochs / LOGGED_LINES));
      if (report.epoch === 1 || report.epoch % every === 0 || report.epoch === report.epochs) log(report);
    },
    finish() {
      if (last === undefined || style.kind === 'quiet') return;
      if (style.kind === 'terminal') write('\n');
      else if (lastWritten !== last) log(last);
    },
  };
}

/** `epoch 12/100 loss 4.812 (recon 4.601, KL 0.211, β 0.55) val 4.590 · 15.2k rows/s · ETA 0:41` */
function describeEpoch(report: EpochReport): string {
  const validation = report.validationLoss === undefined ? '' : ` val ${report.validationLoss.toFixed(3)}`;
  return (
    `epoch ${report.epoch}/${report.epochs} loss ${report.loss.toFixed(3)} ` +
    `(recon ${report.reconstruction.toFixed(3)}, KL ${report.kl.toFixed(3)}, β ${report.beta.toFixed(2)})${validation}` +
    ` · ${rate(report.rowsPerSecond)} rows/s · ETA ${duration(eta(report))}`
  );
}

function bar(report: EpochReport): string {
  const filled = Math.round((BAR_WIDTH * report.epoch) / report.epochs);
  return `[${'#'.repeat(filled)}${'.'.repeat(BAR_WIDTH - filled)}]`;
}

/** Time left if every remaining epoch takes the mean so far (early stopping may end sooner). */
function eta(report: EpochReport): number {
  return ((report.epochs - report.epoch) * report.elapsedMs) / report.epoch;
}

function jsonLine(report: EpochReport): Record<string, unknown> {
  return { level: 'info', message: 'epoch', ...report, etaMs: Math.round(eta(report)) };
}

function rate(rowsPerSecond: number): string {
  return rowsPerSecond >= 1000 ? `${(rowsPerSecond / 1000).toFixed(1)}k` : rowsPerSecond.toFixed(0);
}

/** `0:41`, `12:05`, `1:02:09`. */
function duration(milliseconds: number): string {
  const total = Math.max(0, Math.round(milliseconds / 1000));
  const seconds = String(total % 60).padStart(2, '0');
  const minutes = Math.floor(total / 60) % 60;
  const hours = Math.floor(total / 3600);
  return hours > 0 ? `${hours}:${String(minutes).padStart(2, '0')}:${seconds}` : `${minutes}:${seconds}`;
}
