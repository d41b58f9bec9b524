import { describe, expect, it } from 'vitest';

import { stateRecordKey, stateRecords, StateRollback } from '../../../connector/kafka/state-topic.js';
import { decodeBalanceState, type PartitionBalanceState } from '../../../connector/pipeline/balance-state.js';

function state(partition: number, common: number): PartitionBalanceState {
  return { version: 1, topic: 'sorter.events', partition, originals: { common }, synthetic: {}, capped: {} };
}

describe('state records and their rollback', () => {
  it('keys records <topic>/<partition> and encodes decodable JSON', () => {
    const [record] = stateRecords([state(4, 10)]);
    expect(record!.key).toBe('sorter.events/4');
    expect(stateRecordKey({ topic: 'a.b', partition: 0 })).toBe('a.b/0');
    expect(decodeBalanceState(record!.value!.toString('utf8'))).toEqual({ ok: true, value: state(4, 10) });
  });

  it('restores pending keys to their last durable value, or a tombstone where none is known', () => {
    const rollback = new StateRollback();
    rollback.loaded([{ topic: 'sorter.events', partition: 0 }, { topic: 'sorter.events', partition: 1 }], [state(0, 5), undefined]);
    rollback.sent(stateRecords([state(0, 9)]));
    rollback.delivered();
    expect(rollback.rollback()).toEqual([]);

    rollback.sent(stateRecords([state(0, 12), state(1, 3), state(2, 1)]));
    expect(rollback.rollback()).toEqual([
      { key: 'sorter.events/0', value: stateRecords([state(0, 9)])[0]!.value },
      { key: 'sorter.events/1', value: null },
      { key: 'sorter.events/2', value: null },
    ]);
    expect(rollback.rollback()).toEqual([]);
  });
});
