import { describe, expect, it } from 'vitest';
import { createPrng } from '../../../model/random.js';
import { applyPrivacyGuard, buildGuardReference, hashRow, isTrainingRow, scaledDistance } from '../../../model/vae/guard.js';
import { MIXED_LAYOUT, mixedData } from './support.js';

const data = mixedData(3000, 0.05, createPrng(31));
const width = MIXED_LAYOUT.width;
const row = (r: number) => data.features.slice(r * width, (r + 1) * width);
const stormRow = () => data.classes.indexOf(1);

describe('privacy guard', () => {
  const reference = buildGuardReference(data, { maxRowsPerClass: 500, seed: 1 });

  it('drops and counts an exact copy of a training row, whatever the scope', () => {
    const source = row(stormRow());
    const copy = row(10); // a different training row, copied exactly
    for (const scope of ['off', 'source', 'class'] as const) {
      const result = applyPrivacyGuard(reference, [{ features: copy, classIndex: 1, source }], { scope, minDistance: 0 });
      expect(result.keep).toEqual([false]);
      expect(result.counts).toMatchObject({ checked: 1, kept: 0, exactCopies: 1 });
    }
  });

  it('drops a copy of the source record even when the source was not a training row', () => {
    const unseen = Float32Array.from([9, 9, 9, 0, 0, 1, 1, 9]);
    expect(isTrainingRow(reference, unseen)).toBe(false);
    const result = applyPrivacyGuard(reference, [{ features: unseen.slice(), classIndex: 1, source: unseen }], { scope: 'off', minDistance: 0 });
    expect(result.counts.exactCopies).toBe(1);
  });

  it('drops decodes nearer than minDistance to their source (scope "source") and counts them', () => {
    const source = row(stormRow());
    const near = source.slice();
    near[0]! += 0.001;
    const far = source.slice();
    far[0]! += 3;
    far[1]! -= 3;
    const result = applyPrivacyGuard(
      reference,
      [
        { features: near, classIndex: 1, source },
        { features: far, classIndex: 1, source },
      ],
      { scope: 'source', minDistance: 0.05 },
    );
    expect(result.keep).toEqual([false, true]);
    expect(result.counts).toEqual({ checked: 2, kept: 1, exactCopies: 0, nearSource: 1, nearClassRow: 0 });
  });

  it('with scope "class", drops decodes near any kept training row of the class', () => {
    const storms = reference.classRows[1]!;
    const nearSomeStorm = storms.slice(width, 2 * width);
    nearSomeStorm[2]! += 0.001;
    const unrelatedSource = Float32Array.from([5, 5, 5, 1, 0, 0, 0, 0]);
    const result = applyPrivacyGuard(reference, [{ features: nearSomeStorm, classIndex: 1, source: unrelatedSource }], {
      scope: 'class',
      minDistance: 0.05,
    });
    expect(result.counts.nearClassRow).toBe(1);
  });

  it('keeps at most maxRowsPerClass rows of a class but hashes every training row', () => {
    expect(reference.classRows[0]!.length / width).toBe(500);
    expect(reference.rowHashes.length).toBe(3000);
    for (const r of [0, 1, 2999]) expect(isTrainingRow(reference, row(r))).toBe(true);
  });

  it('hashes −0 like +0 and tells rows apart', () => {
    expect(hashRow(Float32Array.from([-0, 1]))).toBe(hashRow(Float32Array.from([0, 1])));
    expect(hashRow(Float32Array.from([1, 0]))).not.toBe(hashRow(Float32Array.from([0, 1])));
  });

  it('measures distance in training standard deviations (RMS over features)', () => {
    expect(scaledDistance([0, 0], [2, 0], [2, 1])).toBeCloseTo(Math.sqrt(0.5), 12);
  });
});
