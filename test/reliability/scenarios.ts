/**
 * The reliability scenarios in the order they run, each a function of the suite context and a size
 * (`full` for `npm run reliability`, `short` for the CI version) that returns one table row.
 */
import { badFiles } from './bad-files.js';
import { badInput } from './bad-input.js';
import { brokerStopStart } from './broker-restart.js';
import { killAndRestart } from './kill-restart.js';
import { scaleOut } from './scale-out.js';
import { security } from './security.js';
import { soak } from './soak.js';
import type { ScenarioRow, ScenarioSize } from './scenario-row.js';
import type { SuiteContext } from './suite-context.js';

export interface Scenario {
  /** What `--only` takes. */
  readonly name: string;
  readonly run: (context: SuiteContext, size: ScenarioSize) => Promise<ScenarioRow>;
}

export const SCENARIOS: readonly Scenario[] = [
  { name: 'kill-restart', run: killAndRestart },
  { name: 'broker-restart', run: brokerStopStart },
  { name: 'scale-out', run: scaleOut },
  { name: 'bad-input', run: badInput },
  { name: 'soak', run: soak },
  { name: 'bad-files', run: badFiles },
  { name: 'security', run: security },
];
