/**
 * What `/healthz` and `/readyz` answer from. Liveness is a heartbeat the worker loop beats on every
 * turn: a loop stuck for longer than a bound is dead and should be restarted. Readiness is a set of
 * named conditions (consumer assigned, model loaded…) that must all hold before traffic is expected.
 */
import { RaretideError } from '../../config/errors.js';
import { SYSTEM_CLOCK, type Clock } from './clock.js';

export interface LivenessStatus {
  readonly alive: boolean;
  /** Time since the last beat, in milliseconds. */
  readonly sinceBeatMs: number;
  readonly staleAfterMs: number;
}

export class Heartbeat {
  private last: number;

  /**
   * @param staleAfterMs longest gap between beats still counted as alive (default 60 s); it must exceed
   *   the longest single turn of the loop (a model call, a commit, a rate-cap wait slice).
   */
  constructor(
    private readonly staleAfterMs = 60_000,
    private readonly clock: Clock = SYSTEM_CLOCK,
  ) {
    if (!(staleAfterMs > 0)) throw new RaretideError('ops.heartbeat', `the heartbeat bound must be a positive number of milliseconds, got ${staleAfterMs}`);
    this.last = clock.now();
  }

  beat(): void {
    this.last = this.clock.now();
  }

  status(): LivenessStatus {
    const sinceBeatMs = this.clock.now() - this.last;
    return { alive: sinceBeatMs <= this.staleAfterMs, sinceBeatMs, staleAfterMs: this.staleAfterMs };
  }
}

export type ReadinessStatus = { readonly ready: true } | { readonly ready: false; readonly waitingFor: readonly string[] };

/** Ready when every condition named at construction has been reported true (and not false since). */
export class ReadinessGate<Condition extends string = string> {
  private readonly state: Map<Condition, boolean>;

  constructor(conditions: readonly Condition[]) {
    this.state = new Map(conditions.map((condition) => [condition, false]));
  }

  set(condition: Condition, holds: boolean): void {
    if (!this.state.has(condition)) {
      throw new RaretideError('ops.readiness', `unknown readiness condition ${condition}; known: ${[...this.state.keys()].join(', ')}`);
    }
    this.state.set(condition, holds);
  }

  status(): ReadinessStatus {
    const waitingFor = [...this.state].filter(([, holds]) => !holds).map(([condition]) => condition);
    return waitingFor.length === 0 ? { ready: true } : { ready: false, waitingFor };
  }
}
