/**
 * The stratified, seeded train/holdout split: each class's records are shuffled with their own
 * stream (`split/<class>`) and round(share · n) of them held out, at least one and never all when
 * the class has two or more records (a class of one stays in train), so every class can be both
 * learned and scored. Records keep their input order within each side.
 */
import type { Seed } from '../random.js';
import { evaluationStream, sampleIndices } from './evaluation-streams.js';
import type { LabelledRecord } from './quality-report.js';

export interface TrainHoldout {
  readonly train: readonly LabelledRecord[];
  readonly holdout: readonly LabelledRecord[];
  /** For the report's `input.holdoutFrom`. */
  readonly holdoutFrom: string;
}

export function splitTrainHoldout(records: readonly LabelledRecord[], seed: Seed, share: number): TrainHoldout {
  const byClass = new Map<string, number[]>();
  records.forEach((record, index) => {
    const list = byClass.get(record.className) ?? [];
    list.push(index);
    byClass.set(record.className, list);
  });
  const held = new Uint8Array(records.length);
  for (const [className, indices] of byClass) {
    const count = indices.length < 2 ? 0 : Math.min(indices.length - 1, Math.max(1, Math.round(share * indices.length)));
    for (const pick of sampleIndices(indices.length, count, evaluationStream(seed, `split/${className}`))) held[indices[pick]!] = 1;
  }
  return {
    train: records.filter((_, i) => !held[i]),
    holdout: records.filter((_, i) => held[i]),
    holdoutFrom: `${formatShare(share)} of each class of the input, stratified and seeded`,
  };
}

export function givenHoldout(records: readonly LabelledRecord[], holdout: readonly LabelledRecord[]): TrainHoldout {
  return { train: records, holdout, holdoutFrom: `a given holdout of ${holdout.length} records` };
}

/** Records per class, classes in first-seen order. */
export function countByClass(records: readonly LabelledRecord[]): Record<string, number> {
  const counts: Record<string, number> = {};
  for (const { className } of records) counts[className] = (counts[className] ?? 0) + 1;
  return counts;
}

function formatShare(share: number): string {
  return `${Number((share * 100).toFixed(2))} %`;
}
