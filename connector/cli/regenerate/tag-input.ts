/**
 * A provenance tag as the user hands it to `regenerate`: header values as `name=value` flags, or a JSON
 * object — either the headers (as a topic carries them, or a sidecar line's `provenance`) or the
 * `raretide_provenance` field of an Avro output record. Both end as the `SyntheticTag` of provenance.ts.
 */
import { UsageError } from '../../../config/errors.js';
import { PROVENANCE_HEADER_PREFIX, fromHeaders, fromProvenanceRecord, type ProvenanceResult, type ProvenanceTag, type SyntheticTag } from '../../pipeline/provenance.js';

/** `--tag raretide.model=9c1e…` (the `raretide.` prefix may be left out: `--tag model=9c1e…`). */
export function tagFromFlags(flags: readonly string[]): SyntheticTag {
  const headers = flags.map((flag) => {
    const at = flag.indexOf('=');
    if (at <= 0) throw new UsageError(`--tag ${JSON.stringify(flag)}: expected name=value, e.g. --tag raretide.sample=2`);
    const name = flag.slice(0, at);
    return { [name.startsWith(PROVENANCE_HEADER_PREFIX) ? name : `${PROVENANCE_HEADER_PREFIX}${name}`]: flag.slice(at + 1) };
  });
  return syntheticOnly(fromHeaders(headers), '--tag');
}

/** `--tag-json '{"raretide.kind":"synthetic",…}'` or `'{"sourceTopic":…,"modelId":…}'`. */
export function tagFromJson(text: string): SyntheticTag {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (cause) {
    throw new UsageError(`--tag-json is not JSON (${(cause as Error).message}); pass an object such as a sidecar line's "provenance".`, { cause });
  }
  if (value === null || typeof value !== 'object' || Array.isArray(value)) {
    throw new UsageError('--tag-json must be a JSON object: provenance headers by name, or the raretide_provenance field of an output record.');
  }
  const entries = Object.entries(value as Record<string, unknown>);
  if (entries.some(([name]) => name.startsWith(PROVENANCE_HEADER_PREFIX))) {
    const headers = entries.map(([name, header]) => ({ [name]: typeof header === 'string' ? header : JSON.stringify(header) }));
    return syntheticOnly(fromHeaders(headers), '--tag-json');
  }
  return syntheticOnly(fromProvenanceRecord(value), '--tag-json');
}

/** Only a synthetic record can be made again; an original's tag (or a null field) names nothing to make. */
export function syntheticOnly(result: ProvenanceResult<ProvenanceTag | null>, origin: string): SyntheticTag {
  if (!result.ok) throw new UsageError(`${origin}: the provenance tag is not usable: ${result.problem.reason}.`, { code: 'regenerate.bad-tag' });
  if (result.value === null || result.value.kind === 'original') {
    throw new UsageError(`${origin}: the tag is an original record's; only synthetic records can be regenerated.`, { code: 'regenerate.bad-tag' });
  }
  return result.value;
}

/** `events.avro:0@1234 sample 2`: which variant of which source record, for messages. */
export function describeVariant(tag: SyntheticTag): string {
  const { topic, partition, offset } = tag.source;
  return `${topic}:${partition}@${offset} sample ${tag.sampleIndex}`;
}

/** `events.avro:0@1234 sample 2, model 9c1e…, seed 3, temperature 1`: the whole tag, for messages. */
export function describeTag(tag: SyntheticTag): string {
  return `${describeVariant(tag)}, model ${tag.modelId}, seed ${tag.seed}, temperature ${tag.temperature}`;
}
