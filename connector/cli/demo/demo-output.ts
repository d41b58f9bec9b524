/**
 * What the demo prints on standard output: a numbered line as each step starts, then its time, its
 * figures and where its artefacts lie. Progress within a step (training epochs, evaluation stages)
 * goes to standard error, redrawn in place on a terminal. `--quiet` prints nothing but errors.
 */
import { duration } from '../replay/progress-line.js';

/** Indent of the lines under a step's heading. */
const DETAIL = '      ';

export class DemoOutput {
  /** Wall time of each finished step, ms, by step name. */
  readonly stepMs: Record<string, number> = {};
  private stepStarted = 0;
  private stepName = '';

  constructor(
    private readonly write: (text: string) => void,
    private readonly quiet: boolean,
    private readonly now: () => number,
    private readonly steps: number,
  ) {}

  line(text = ''): void {
    if (!this.quiet) this.write(`${text}\n`);
  }

  /** `[2/4] fit       what it does`. */
  begin(step: number, name: string, what: string): void {
    this.stepStarted = this.now();
    this.stepName = name;
    this.line(`[${step}/${this.steps}] ${name.padEnd(9)} ${what}`);
  }

  /** `done in 3.2 s: <summary>`, then each detail line (figures first, artefact paths last). */
  done(summary: string, details: readonly string[] = []): void {
    const elapsed = this.now() - this.stepStarted;
    this.stepMs[this.stepName] = elapsed;
    this.line(`${DETAIL}done in ${duration(elapsed)}: ${summary}`);
    for (const detail of details) this.detail(detail);
  }

  /** A line under the current step's heading. */
  detail(text: string): void {
    this.line(`${DETAIL}${text}`);
  }
}

export function percent(share: number): string {
  const value = share * 100;
  return `${value >= 10 ? value.toFixed(1) : value.toFixed(2)} %`;
}

export function count(value: number): string {
  return value.toLocaleString('en-US');
}
