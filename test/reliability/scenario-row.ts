/**
 * One row of the reliability table: a scenario, what it checked, its counts and timings, pass or fail.
 * Scenarios record checks instead of throwing on the first one, so a failed row still shows every
 * figure and every check that failed.
 */

/** `full` for `npm run reliability`, `short` for the CI version inside `npm test`. */
export type ScenarioSize = 'full' | 'short';

export type CountValue = number | string;

export interface ScenarioRow {
  readonly scenario: string;
  /** What was checked, in a sentence. */
  readonly checked: string;
  /** Counts and figures, in the order they were recorded. */
  readonly counts: readonly (readonly [string, CountValue])[];
  /** Wall-clock seconds the scenario took, set-up and clean-up included. */
  readonly seconds: number;
  readonly pass: boolean;
  /** Each failed check with what was seen; an exception that ended the scenario is one too. */
  readonly failures: readonly string[];
}

export class RowRecorder {
  private readonly counts: [string, CountValue][] = [];
  private readonly failures: string[] = [];
  private readonly started = Date.now();

  constructor(
    readonly scenario: string,
    readonly checked: string,
  ) {}

  /** Records a figure; a second value under the same name replaces the first. */
  count(name: string, value: CountValue): void {
    const existing = this.counts.find(([known]) => known === name);
    if (existing === undefined) this.counts.push([name, value]);
    else existing[1] = value;
  }

  /** Records a check; `seen` says what was found when it fails. */
  check(what: string, passed: boolean, seen?: string): boolean {
    if (!passed) this.failures.push(seen === undefined ? what : `${what} (seen: ${seen})`);
    return passed;
  }

  /** The scenario stopped on an exception: that is a failure too, and the row keeps what it had. */
  fail(error: unknown): void {
    this.failures.push(`stopped by an error: ${error instanceof Error ? error.message : String(error)}`);
  }

  finish(): ScenarioRow {
    return {
      scenario: this.scenario,
      checked: this.checked,
      counts: this.counts.map(([name, value]) => [name, value] as const),
      seconds: Math.round((Date.now() - this.started) / 100) / 10,
      pass: this.failures.length === 0,
      failures: [...this.failures],
    };
  }
}
