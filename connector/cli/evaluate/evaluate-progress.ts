/**
 * Evaluation progress on stderr, fed by `evaluateQuality`'s `onProgress(stage, done)`. On a terminal, one
 * line redrawn in place with a bar for the current stage; elsewhere (logs, CI) one line as each stage
 * starts, as text or JSON. Nothing at all when quiet.
 */
import type { ProgressStyle } from '../fit-progress.js';

const BAR_WIDTH = 20;
const ERASE_LINE = '\r\u001b[2K';

export interface EvaluateProgress {
  update(stage: string, done: number): void;
  /** A message between updates (on a terminal it replaces the bar, which is redrawn at the next update). */
  note(message: string): void;
  /** Ends the terminal line. */
  finish(): void;
}

export function evaluateProgress(style: ProgressStyle, write: (text: string) => void): EvaluateProgress {
  let stage: string | undefined;
  let percent = -1;
  let drawn = false;
  return {
    update(next, done) {
      if (style.kind === 'quiet') return;
      const nextPercent = Math.round(100 * Math.min(1, Math.max(0, done)));
      if (style.kind === 'terminal') {
        // Redraw only when what is shown changes: a stage may report thousands of steps.
        if (next === stage && nextPercent === percent) return;
        stage = next;
        percent = nextPercent;
        drawn = true;
        write(`${ERASE_LINE}${`${bar(nextPercent)} ${next} ${nextPercent} %`.slice(0, Math.max(1, style.columns - 1))}`);
        return;
      }
      if (next === stage) return;
      stage = next;
      write(style.kind === 'json' ? `${JSON.stringify({ level: 'info', message: 'evaluate stage', stage: next })}\n` : `evaluate: ${next}\n`);
    },
    note(message) {
      if (style.kind === 'quiet') return;
      if (style.kind === 'json') write(`${JSON.stringify({ level: 'info', message })}\n`);
      else write(style.kind === 'terminal' && drawn ? `${ERASE_LINE}${message}\n` : `${message}\n`);
      drawn = false;
      // The bar went with the note's line: draw it again at the next update.
      percent = -1;
    },
    finish() {
      if (style.kind === 'terminal' && drawn) write('\n');
      drawn = false;
    },
  };
}

function bar(percent: number): string {
  const filled = Math.round((BAR_WIDTH * percent) / 100);
  return `[${'#'.repeat(filled)}${'.'.repeat(BAR_WIDTH - filled)}]`;
}
