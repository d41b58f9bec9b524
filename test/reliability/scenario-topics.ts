/**
 * Topics of one scenario, and their deletion at clean-up (the state topic too, when the worker made it).
 */
import { defaultStateTopic } from '../../connector/kafka/client-settings.js';
import type { ScenarioTopics } from '../support/run-worker-scenario.js';
import { createUniqueTopic, deleteTopics, uniqueName } from '../support/topics.js';
import type { CleanupStack } from './cleanup-stack.js';

/**
 * Creates the source, output and dead-letter topics with `partitions` each (what the worker would create
 * for the last two), so progress readers can watch the output from the start; the worker creates the
 * state topic itself.
 */
export async function createScenarioTopics(brokers: string, prefix: string, partitions: number, cleanup: CleanupStack): Promise<ScenarioTopics> {
  const group = uniqueName(`${prefix}-group`);
  const created: string[] = [];
  cleanup.defer(`topics of ${prefix}`, () => deleteExisting(brokers, [...created, defaultStateTopic(group)]));
  for (const role of ['src', 'out', 'dlq']) created.push(await createUniqueTopic(brokers, { prefix: `${prefix}-${role}`, partitions }));
  const [source, output, deadLetter] = created as [string, string, string];
  return { source, output, deadLetter, group };
}

async function deleteExisting(brokers: string, topics: readonly string[]): Promise<void> {
  for (const topic of topics) {
    try {
      await deleteTopics(brokers, [topic]);
    } catch (error) {
      if (!/unknown topic/i.test((error as Error).message)) throw error;
    }
  }
}
