/**
 * Watches whether the live stream still looks like the data the model was fitted on: a keyed sample of
 * the decoded, labelled records is scored under the model (negative ELBO, model/drift/score.ts) and
 * kept in a window of the most recent scores, read out as the share above the model's reference p99
 * (≈ 0.01 while the stream is like the training data) and the window's median.
 *
 * Cost: a scoring call has a fixed overhead of a few tensor passes, so sampled records are encoded
 * into a buffer at once and scored `scoreRows` at a time (test/bench/drift.ts measures both). The
 * sample is 1 in `sampleOneIn` records, chosen by a hash of (partition, offset): the same records on
 * a replay, and no aliasing with a stream that repeats with some period (every n-th would).
 *
 * The scores follow the model: `follow` (at start and after a hot reload) empties the buffer and the
 * window, since scores under another model are not comparable.
 */
import type { DriftReference } from '../../model/drift/reference.js';
import type { DriftScorer } from '../../model/drift/live-scorer.js';
import type { AvroRecord } from '../../model/features/avro-types.js';
import type { DecodedEntry } from './decode-stage.js';
import { DriftWindow } from './drift-window.js';

export interface DriftSettings {
  /** Score 1 record in this many (chosen by a hash of partition and offset). @default 32 */
  readonly sampleOneIn: number;
  /** Sampled records per scoring call. @default 256 */
  readonly scoreRows: number;
  /** Most recent scores the figures are read over. @default 1000 */
  readonly windowRecords: number;
}

/**
 * 1 in 32: test/bench/drift.ts measured ~74 µs per scored record at 256 rows per call on a host loaded
 * 7× over its 2 cores (~30 µs when quiet, scaled by the same run's sampling figure), so ~1–2 µs per
 * consumed record, a few per cent of the worker's ~68 µs. A full window then spans 32,000 records.
 */
export const DEFAULT_DRIFT_SETTINGS: DriftSettings = { sampleOneIn: 32, scoreRows: 256, windowRecords: 1000 };

/** The window's figures beside the reference they are read against. */
export interface DriftFigures {
  readonly modelId: string;
  readonly reference: DriftReference;
  /** Scores in the window (the ratio is coarse until it holds `windowRecords`). */
  readonly windowRecords: number;
  /** Share of the window's scores above `reference.p99`. */
  readonly exceedanceRatio: number;
  /** Median negative ELBO of the window, in nats. */
  readonly medianNegativeElbo: number;
}

export class DriftMonitor {
  readonly settings: DriftSettings;
  private scorer: DriftScorer | undefined;
  private window: DriftWindow | undefined;
  private features = new Float32Array(0);
  private readonly classes: Int32Array;
  private pending = 0;
  private cached: DriftFigures | undefined;

  constructor(settings: Partial<DriftSettings> = {}) {
    this.settings = { ...DEFAULT_DRIFT_SETTINGS, ...settings };
    this.classes = new Int32Array(this.settings.scoreRows);
  }

  /** Scores under `scorer` from now on; undefined (a model without a drift reference) turns scoring off. */
  follow(scorer: DriftScorer | undefined): void {
    this.scorer = scorer;
    this.window = scorer === undefined ? undefined : new DriftWindow(this.settings.windowRecords, scorer.reference.p99);
    this.features = new Float32Array(scorer === undefined ? 0 : this.settings.scoreRows * scorer.width);
    this.pending = 0;
    this.cached = undefined;
  }

  /** Takes the sampled records of a batch; returns true when new scores entered the window. */
  observe(entries: readonly DecodedEntry[]): boolean {
    const scorer = this.scorer;
    if (scorer === undefined) return false;
    let scored = false;
    for (const entry of entries) {
      if (entry.kind !== 'record' || !isDriftSample(entry.message.partition, entry.message.offset, this.settings.sampleOneIn)) continue;
      const classIndex = scorer.classIndex(entry.label);
      if (classIndex < 0) continue;
      scorer.encode(entry.record as AvroRecord, this.features, this.pending);
      this.classes[this.pending] = classIndex;
      this.pending += 1;
      if (this.pending === this.settings.scoreRows) {
        this.window!.add(scorer.score(this.features, this.classes));
        this.pending = 0;
        this.cached = undefined;
        scored = true;
      }
    }
    return scored;
  }

  /** The current figures; undefined without a reference or before the first scores. */
  figures(): DriftFigures | undefined {
    const { scorer, window } = this;
    if (scorer === undefined || window === undefined || window.size === 0) return undefined;
    this.cached ??= {
      modelId: scorer.modelId,
      reference: scorer.reference,
      windowRecords: window.size,
      exceedanceRatio: window.exceedanceRatio(),
      medianNegativeElbo: window.median(),
    };
    return this.cached;
  }
}

/**
 * Whether the record at (partition, offset) is in the 1-in-`oneIn` drift sample: the MurmurHash3
 * 32-bit finaliser (Appleby; constants from memory) over partition and offset, modulo `oneIn`.
 */
export function isDriftSample(partition: number, offset: bigint, oneIn: number): boolean {
  if (oneIn <= 1) return true;
  const value = Number(offset);
  const low = value >>> 0;
  const high = Math.floor(value / 0x1_0000_0000) >>> 0;
  const hash = fmix32(low ^ fmix32(high ^ fmix32(partition ^ 0x5bd1e995)));
  return hash % oneIn === 0;
}

function fmix32(input: number): number {
  let h = input >>> 0;
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}
