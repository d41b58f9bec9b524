/**
 * The live line of `raretide demo --kafka`: readings produced and consumed, synthetic readings emitted,
 * and each targeted class's share of the output stream (originals + synthetic) against its target. On a
 * terminal it is redrawn in place every couple of seconds (log lines written meanwhile erase it first);
 * elsewhere it is a line each time.
 */
import type { ClassTally } from '../../pipeline/accounting.js';
import { duration } from '../replay/progress-line.js';
import { count, percent } from './demo-output.js';

export interface LiveFigures {
  readonly elapsedMs: number;
  readonly produced: number;
  readonly consumed: number;
  readonly byClass: ReadonlyMap<string, ClassTally>;
  readonly targets: Readonly<Record<string, number>>;
}

export function liveLine(figures: LiveFigures): string {
  let originals = 0;
  let synthetic = 0;
  for (const tally of figures.byClass.values()) {
    originals += tally.consumed;
    synthetic += tally.synthetic;
  }
  const stream = originals + synthetic;
  const shares = Object.entries(figures.targets).map(([label, target]) => {
    const tally = figures.byClass.get(label);
    const share = stream === 0 || tally === undefined ? 0 : (tally.consumed + tally.synthetic) / stream;
    return `${label} ${percent(share)} (${percent(target)})`;
  });
  return (
    `live ${duration(figures.elapsedMs)}: produced ${count(figures.produced)}, consumed ${count(figures.consumed)}, ` +
    `synthetic ${count(synthetic)}; share (target): ${shares.join(', ')}`
  );
}

/** Per class, the most common first: readings consumed and synthetic readings emitted. */
export function classTotals(byClass: ReadonlyMap<string, ClassTally>): string {
  return [...byClass]
    .sort(([, a], [, b]) => b.consumed - a.consumed)
    .map(([label, tally]) => `${label} ${count(tally.consumed)}${tally.synthetic > 0 ? ` + ${count(tally.synthetic)} synthetic` : ''}`)
    .join(', ');
}

const ERASE_LINE = '\r\u001b[2K';

/** Writes the live line to standard error, redrawn on a terminal; wraps other stderr writers so they erase it first. */
export class LiveDisplay {
  private drawn = false;

  constructor(
    private readonly write: (text: string) => void,
    /** Terminal width, or undefined when standard error is not a terminal. */
    private readonly columns: number | undefined,
    private readonly quiet: boolean,
  ) {}

  show(line: string): void {
    if (this.quiet) return;
    if (this.columns === undefined) {
      this.write(`${line}\n`);
      return;
    }
    this.write(`${ERASE_LINE}${line.slice(0, Math.max(1, this.columns - 1))}`);
    this.drawn = true;
  }

  /** Text for standard error from anyone else (the worker's log): clears the live line first. */
  readonly passThrough = (text: string): void => {
    if (this.drawn) this.write(ERASE_LINE);
    this.drawn = false;
    this.write(text);
  };

  /** Ends a redrawn line so what follows starts on a line of its own. */
  finish(): void {
    if (this.drawn) this.write('\n');
    this.drawn = false;
  }
}
