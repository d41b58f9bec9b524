import { describe, expectTypeOf, it } from 'vitest';
import type { BalanceController } from '../../../connector/pipeline/balance.js';
import type { fromHeaders, toHeaders } from '../../../connector/pipeline/provenance.js';
import type { Checkpoint, InputMessage, OutputMessage } from '../../../connector/pipeline/source-sink.js';

// The interfaces have no implementation yet; these checks keep the pieces of the core fitting together.
describe('source/sink interfaces', () => {
  it('carry provenance headers and balance state without conversion', () => {
    expectTypeOf<ReturnType<typeof toHeaders>>().toExtend<OutputMessage['headers']>();
    expectTypeOf<InputMessage['headers']>().toExtend<Parameters<typeof fromHeaders>[0]>();
    expectTypeOf<ReturnType<BalanceController['snapshot']>>().toExtend<Checkpoint['state']>();
    expectTypeOf<InputMessage['offset']>().toEqualTypeOf<bigint>();
  });
});
