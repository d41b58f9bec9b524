/** `raretide replay`'s input and output flags: which combinations name one input and one output. */
import { describe, expect, it } from 'vitest';
import { UsageError } from '../../../config/errors.js';
import { endpointsFrom, type EndpointOptions } from '../../../connector/cli/replay/replay-endpoints.js';

describe('replay endpoints from flags', () => {
  it.each<[string, EndpointOptions, unknown]>([
    ['file → file', { file: 'a.avro', out: 'b.avro' }, { input: { kind: 'file', path: 'a.avro' }, output: { kind: 'file', path: 'b.avro' } }],
    ['topic from the earliest → file', { fromTopic: true, out: 'b.avro' }, { input: { kind: 'topic', start: { from: 'earliest' } }, output: { kind: 'file', path: 'b.avro' } }],
    ['topic from an offset → topic', { fromTopic: true, startOffset: '9007199254740993', toTopic: true }, { input: { kind: 'topic', start: { from: 'offset', offset: 9007199254740993n } }, output: { kind: 'topic' } }],
    [
      'topic from a time → topic with a summary file',
      { fromTopic: true, startTime: '2026-01-31T08:00:00Z', toTopic: true, summary: 's.json' },
      { input: { kind: 'topic', start: { from: 'timestamp', timestamp: Date.UTC(2026, 0, 31, 8) } }, output: { kind: 'topic', summary: 's.json' } },
    ],
  ])('%s', (_name, options, expected) => {
    expect(endpointsFrom(options)).toEqual(expected);
  });

  it.each<[string, EndpointOptions, RegExp]>([
    ['no input', { out: 'b.avro' }, /needs an input/],
    ['two inputs', { file: 'a.avro', fromTopic: true, out: 'b.avro' }, /not both/],
    ['no output', { file: 'a.avro' }, /needs an output/],
    ['two outputs', { file: 'a.avro', out: 'b.avro', toTopic: true }, /not both/],
    ['a start without --from-topic', { file: 'a.avro', startOffset: '5', out: 'b.avro' }, /add --from-topic/],
    ['two starts', { fromTopic: true, startOffset: '5', startTime: '2026-01-31T08:00:00Z', out: 'b.avro' }, /not both/],
    ['a negative offset', { fromTopic: true, startOffset: '-1', out: 'b.avro' }, /whole number/],
    ['a time that is not ISO 8601', { fromTopic: true, startTime: 'yesterday', out: 'b.avro' }, /ISO 8601/],
    ['--summary beside a file output', { file: 'a.avro', out: 'b.avro', summary: 's.json' }, /beside it/],
  ])('rejects %s', (_name, options, message) => {
    expect(() => endpointsFrom(options)).toThrow(UsageError);
    expect(() => endpointsFrom(options)).toThrow(message);
  });
});
