/** How the report writes numbers: fixed decimals for scores, grouped digits for counts. */
import type { Interval } from '../quality-report.js';

/** `0.52`; `n/a` for a value that is not a number (a score undefined on this data). */
export function formatScore(value: number, decimals = 2): string {
  return Number.isFinite(value) ? value.toFixed(decimals) : 'n/a';
}

/** `0.52 [0.47, 0.58]`: the estimate with its bootstrap interval. */
export function formatInterval(interval: Interval, decimals = 2): string {
  return `${formatScore(interval.estimate, decimals)} [${formatScore(interval.low, decimals)}, ${formatScore(interval.high, decimals)}]`;
}

/** `12,345`. */
export function formatCount(value: number): string {
  return value.toLocaleString('en-US');
}

/** `850 ms`, `12.4 s`, `3 min 5 s`. */
export function formatDuration(milliseconds: number): string {
  if (milliseconds < 1000) return `${Math.round(milliseconds)} ms`;
  if (milliseconds < 60_000) return `${(milliseconds / 1000).toFixed(1)} s`;
  const minutes = Math.floor(milliseconds / 60_000);
  return `${minutes} min ${Math.round((milliseconds - minutes * 60_000) / 1000)} s`;
}
