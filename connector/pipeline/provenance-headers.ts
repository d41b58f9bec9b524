/**
 * Provenance headers for the outputs of one batch, exactly as `toHeaders` writes them (same names,
 * values and order; test/unit/pipeline/provenance-headers.test.ts holds the two against each other), but
 * built once where they repeat. The header objects of the kind, of the run's model, seed and temperature
 * and of each topic, partition and sample index are shared between messages — node-rdkafka only reads
 * them — and a record's source headers are shared by its original and its variants. Per record that
 * leaves one offset text, instead of four to eight headers, each checked and formatted, per output.
 */
import { RaretideError } from '../../config/errors.js';
import { PROVENANCE_HEADERS, toHeaders, type SourceCoordinates } from './provenance.js';
import type { OutputHeader } from './source-sink.js';

/** What every synthetic record of a batch has in common. */
export interface SyntheticRun {
  readonly modelId: string;
  readonly seed: bigint;
  readonly temperature: number;
}

const MAX_INT32 = 2 ** 31 - 1;
const MAX_INT64 = 2n ** 63n - 1n;

const ORIGINAL_KIND: OutputHeader = Object.freeze({ [PROVENANCE_HEADERS.kind]: 'original' });
const SYNTHETIC_KIND: OutputHeader = Object.freeze({ [PROVENANCE_HEADERS.kind]: 'synthetic' });

/** The three source headers of one record (topic, partition, offset), in writing order. */
export type SourceHeaders = readonly [OutputHeader, OutputHeader, OutputHeader];

export class ProvenanceHeaderWriter {
  /** The model, seed and temperature headers, made with the first synthetic record. */
  private run: readonly [OutputHeader, OutputHeader, OutputHeader] | undefined;
  private readonly topics = new Map<string, OutputHeader>();
  private readonly partitions = new Map<number, OutputHeader>();
  private readonly samples: OutputHeader[] = [];

  constructor(private readonly synthesis: SyntheticRun) {}

  /** The source headers of a record, to pass to `original` and `synthetic`. */
  source({ topic, partition, offset }: SourceCoordinates): SourceHeaders {
    if (offset < 0n || offset > MAX_INT64) throw badTag(`source offset ${offset} is outside 0…${MAX_INT64}`);
    return [this.topicHeader(topic), this.partitionHeader(partition), { [PROVENANCE_HEADERS.sourceOffset]: offset.toString() }];
  }

  original(source: SourceHeaders): OutputHeader[] {
    return [ORIGINAL_KIND, ...source];
  }

  synthetic(source: SourceHeaders, sampleIndex: number): OutputHeader[] {
    const [model, seed, temperature] = (this.run ??= this.runHeaders());
    return [SYNTHETIC_KIND, ...source, model, this.sampleHeader(sampleIndex), seed, temperature];
  }

  /** Checked and written as toHeaders does it (it throws on a malformed tag), once. */
  private runHeaders(): readonly [OutputHeader, OutputHeader, OutputHeader] {
    const { modelId, seed, temperature } = this.synthesis;
    const reference = toHeaders({ kind: 'synthetic', source: { topic: 't', partition: 0, offset: 0n }, sampleIndex: 0, modelId, seed, temperature });
    return [Object.freeze(reference[4]!), Object.freeze(reference[6]!), Object.freeze(reference[7]!)];
  }

  private topicHeader(topic: string): OutputHeader {
    let header = this.topics.get(topic);
    if (header === undefined) {
      if (topic === '') throw badTag('source topic is empty');
      header = Object.freeze({ [PROVENANCE_HEADERS.sourceTopic]: topic });
      this.topics.set(topic, header);
    }
    return header;
  }

  private partitionHeader(partition: number): OutputHeader {
    let header = this.partitions.get(partition);
    if (header === undefined) {
      if (!isInt32(partition)) throw badTag(`source partition ${partition} is not a whole number from 0 to ${MAX_INT32}`);
      header = Object.freeze({ [PROVENANCE_HEADERS.sourcePartition]: String(partition) });
      this.partitions.set(partition, header);
    }
    return header;
  }

  private sampleHeader(sampleIndex: number): OutputHeader {
    const cached = this.samples[sampleIndex];
    if (cached !== undefined) return cached;
    if (!isInt32(sampleIndex)) throw badTag(`sample index ${sampleIndex} is not a whole number from 0 to ${MAX_INT32}`);
    const header = Object.freeze({ [PROVENANCE_HEADERS.sample]: String(sampleIndex) });
    // Sample indices are small (below k), so a dense array is the cheapest cache.
    if (sampleIndex < 1024) this.samples[sampleIndex] = header;
    return header;
  }
}

function isInt32(value: number): boolean {
  return Number.isInteger(value) && value >= 0 && value <= MAX_INT32;
}

/** Same code and wording as `toHeaders` for the same fault. */
function badTag(fault: string): RaretideError {
  return new RaretideError('provenance.bad-tag', `Cannot write provenance: ${fault}.`);
}
