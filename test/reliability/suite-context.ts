/**
 * What every scenario of a reliability run shares: the broker, the seed, a workspace holding the sorter
 * schema file and one small sorter model (fitted once per run, about a second), a progress line, and a
 * broker of its own that a scenario may stop and start.
 */
import { startLocalBroker, type LocalBroker } from '../../deploy/kafka/local-broker.js';
import { fitSorterModel, makeWorkspace, writeRunConfig, writeSorterSchema, type ConfigOptions } from '../support/run-worker-scenario.js';

export interface SuiteContext {
  /** Bootstrap address of the broker the scenarios share (scenario 2 starts its own besides). */
  readonly brokers: string;
  /** Seeds every random choice of the run: data, kill points, fuzz. */
  readonly seed: number;
  readonly dir: string;
  readonly schemaFile: string;
  readonly modelDir: string;
  readonly modelId: string;
  /** A line about what is happening, for a person watching a long run. */
  readonly progress: (line: string) => void;
  /**
   * A broker of the suite's own (deploy/kafka) that a scenario may stop and start, started on first call
   * or ahead of time; the suite stops it at the end if its user has not.
   */
  readonly restartableBroker: () => Promise<LocalBroker>;
  /** Where each worker's log is kept when it exits; undefined keeps none. */
  readonly logDir: string | undefined;
}

export interface PreparedSuite {
  readonly context: SuiteContext;
  /** Removes the workspace. */
  close(): Promise<void>;
}

export interface SuiteOptions {
  readonly brokers: string;
  readonly seed: number;
  readonly progress: (line: string) => void;
  /**
   * Start the restartable broker now, so its start-up (tens of seconds of JVM) overlaps the scenarios
   * that run before the one using it.
   * @default false
   */
  readonly startRestartableBroker?: boolean;
  /** Keep every worker's log here. @default not kept */
  readonly logDir?: string;
}

export async function prepareSuite(options: SuiteOptions): Promise<PreparedSuite> {
  const { brokers, seed, progress } = options;
  let restartable: Promise<LocalBroker> | undefined;
  const restartableBroker = () => (restartable ??= startLocalBroker({ log: progress }));
  const stopRestartable = async () => {
    const broker = await restartable?.catch(() => undefined);
    await broker?.stop();
  };
  if (options.startRestartableBroker === true) restartableBroker().catch(() => undefined);
  const workspace = await makeWorkspace('reliability');
  try {
    const schemaFile = await writeSorterSchema(workspace.dir);
    const modelDir = `${workspace.dir}/model`;
    const modelId = await fitSorterModel(modelDir);
    return {
      context: { brokers, seed, dir: workspace.dir, schemaFile, modelDir, modelId, progress, restartableBroker, logDir: options.logDir },
      close: async () => {
        await stopRestartable();
        await workspace.remove();
      },
    };
  } catch (error) {
    await stopRestartable();
    await workspace.remove();
    throw error;
  }
}

/** What a scenario's run config sets beyond the suite's broker, schema and model (either may be overridden). */
export type ScenarioConfigOptions = Omit<ConfigOptions, 'brokers' | 'schemaFile' | 'modelDir'> & Partial<Pick<ConfigOptions, 'brokers' | 'schemaFile'>>;

/** `writeRunConfig` in the suite's workspace, with its broker, sorter schema and model unless `options` say otherwise. */
export function writeScenarioConfig(context: SuiteContext, name: string, options: ScenarioConfigOptions): Promise<string> {
  return writeRunConfig(context.dir, name, { brokers: context.brokers, schemaFile: context.schemaFile, modelDir: context.modelDir, ...options });
}
