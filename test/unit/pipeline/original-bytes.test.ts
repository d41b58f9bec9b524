/**
 * Originals passed through keep the bytes they came in when that is the same record: both framings raw
 * with the reader schema. Then the payload is not framed again; otherwise it is, as before.
 */
import { describe, expect, it } from 'vitest';
import { knownSchema } from '../../../connector/avro/known-schema.js';
import { RawFraming } from '../../../connector/avro/raw-framing.js';
import { SingleObjectFraming } from '../../../connector/avro/single-object-framing.js';
import { originalsPassUnchanged } from '../../../connector/pipeline/original-bytes.js';
import { PROVENANCE_HEADERS } from '../../../connector/pipeline/provenance.js';
import { messagesOf, SORTER_EVENT_SCHEMA, sorterEvents, sorterPipeline, sorterSchema } from './support/sorter-events.js';

const TOPIC = 'sorter.events';
/** The sorter schema with one more field: another schema, another fingerprint. */
const WIDER = knownSchema({ ...SORTER_EVENT_SCHEMA, fields: [...SORTER_EVENT_SCHEMA.fields, { name: 'shift', type: 'int', default: 0 }] }, 'wider.avsc');

describe('originalsPassUnchanged', () => {
  it('holds for raw framing in and out with the reader schema only', () => {
    const raw = new RawFraming(sorterSchema);
    expect(originalsPassUnchanged(raw, raw, sorterSchema)).toBe(true);
    expect(originalsPassUnchanged(raw, new RawFraming(WIDER), sorterSchema)).toBe(false);
    expect(originalsPassUnchanged(new RawFraming(WIDER), raw, sorterSchema)).toBe(false);
    expect(originalsPassUnchanged(raw, raw, WIDER)).toBe(false);
    expect(originalsPassUnchanged(new SingleObjectFraming([sorterSchema]), new SingleObjectFraming([sorterSchema]), sorterSchema)).toBe(false);
    expect(originalsPassUnchanged(raw, new SingleObjectFraming([sorterSchema]), sorterSchema)).toBe(false);
  });
});

describe('PipelineCore — originals as read', () => {
  async function originalsOf(originalsAsRead: boolean) {
    const { core } = sorterPipeline({ targets: { jam: 0.2 }, seed: 7, temperature: 0.8, includeOriginals: true, originalsAsRead, assign: { topic: TOPIC, partition: 0 } });
    const messages = messagesOf(sorterEvents(60, { jam: 0.1 }, 9), 1, TOPIC);
    const { outputs } = await core.processBatch(messages);
    const originals = outputs.filter((output) => output.headers.some((header) => header[PROVENANCE_HEADERS.kind] === 'original'));
    return { messages, originals, synthetic: outputs.length - originals.length };
  }

  it('passes the payload buffers through, and the same bytes as framing them again would give', async () => {
    const asRead = await originalsOf(true);
    const framed = await originalsOf(false);
    expect(asRead.originals).toHaveLength(60);
    asRead.originals.forEach((output, index) => {
      expect(output.value).toBe(asRead.messages[index]!.value);
      // avsc's encoding of a sorter event is canonical, so a re-encoded original is byte-identical.
      expect(framed.originals[index]!.value.equals(output.value)).toBe(true);
    });
    expect(asRead.synthetic).toBe(framed.synthetic);
  });
});
