/** The verdict's rules (model/quality/verdict.ts) on hand-built results. */
import { describe, expect, it } from 'vitest';
import type { ClassScores, GeneratorName, GeneratorResult, Interval } from '../../../model/quality/quality-report.js';
import { compareIntervals, writeVerdict } from '../../../model/quality/verdict.js';

const interval = (estimate: number, low: number, high: number): Interval => ({ estimate, low, high });
const scores = (f1: Interval, prAuc: Interval): ClassScores => ({
  className: 'squall',
  precision: interval(0.5, 0.3, 0.7),
  recall: interval(0.5, 0.3, 0.7),
  f1,
  prAuc,
  rocAuc: interval(0.9, 0.85, 0.95),
});

function result(generator: GeneratorName, f1: Interval, prAuc: Interval, extra: Partial<GeneratorResult> = {}): GeneratorResult {
  return {
    generator,
    syntheticCounts: { squall: generator === 'none' ? 0 : 50 },
    usefulness: [
      { classifier: 'logistic-regression', classes: [scores(f1, prAuc)] },
      { classifier: 'random-forest', classes: [scores(f1, prAuc)] },
    ],
    generationMs: 1,
    ...extra,
  };
}

const quiet = {
  privacy: [{ className: 'squall', exactCopies: 0, syntheticToTrain: { p5: 0.3, p50: 0.6, p95: 1 }, holdoutToTrain: { p5: 0.3, p50: 0.6, p95: 1 } }],
  fidelity: [{ className: 'squall', fields: [], correlationDifference: 0.05, detectionAuc: interval(0.55, 0.5, 0.6), labelFidelity: 0.8 }],
};
const baselines = (f1: Interval, prAuc: Interval) => (['duplication', 'smote', 'gaussian-copula'] as const).map((name) => result(name, f1, prAuc, quiet));
const base = interval(0.4, 0.3, 0.5);

describe('verdict', () => {
  it('compares intervals: better only when wholly above, worse only when wholly below', () => {
    expect(compareIntervals(interval(0.7, 0.6, 0.8), interval(0.4, 0.3, 0.5))).toBe('better');
    expect(compareIntervals(interval(0.2, 0.1, 0.25), interval(0.4, 0.3, 0.5))).toBe('worse');
    expect(compareIntervals(interval(0.6, 0.45, 0.8), interval(0.4, 0.3, 0.5))).toBe('tie');
  });

  it('says plainly that augmentation does not help when the intervals overlap those of real records alone', () => {
    const verdict = writeVerdict({
      generators: [result('none', base, base), ...baselines(base, base), result('vae', interval(0.45, 0.35, 0.55), interval(0.45, 0.35, 0.55), quiet)],
      requested: { squall: 50 },
    });
    expect(verdict.headline).toMatch(/does not help here/);
    expect(verdict.details[0]).toMatch(/ties the best baseline/);
  });

  it('says it helps when some interval lies wholly above and none below, and names a better baseline', () => {
    const high = interval(0.7, 0.6, 0.8);
    const verdict = writeVerdict({
      generators: [result('none', base, base), ...baselines(interval(0.9, 0.85, 0.95), interval(0.9, 0.85, 0.95)), result('vae', high, high, quiet)],
      requested: { squall: 50 },
    });
    expect(verdict.headline).toMatch(/helps here: it beats real records alone on 4 of 4/);
    expect(verdict.details[0]).toMatch(/best baseline \(duplication\) does better than the VAE on 4 of 4/);
  });

  it('explains duplication copies, warns of VAE copies, easy detection, closeness and missing records', () => {
    const verdict = writeVerdict({
      generators: [
        result('none', base, base),
        result('duplication', base, base, { ...quiet, privacy: [{ ...quiet.privacy[0]!, exactCopies: 50 }] }),
        result('vae', base, base, {
          syntheticCounts: { squall: 40 },
          privacy: [{ className: 'squall', exactCopies: 2, syntheticToTrain: { p5: 0, p50: 0.1, p95: 0.5 }, holdoutToTrain: { p5: 0.3, p50: 0.6, p95: 1 } }],
          fidelity: [{ ...quiet.fidelity[0]!, detectionAuc: interval(0.95, 0.9, 1) }],
        }),
      ],
      requested: { squall: 50 },
    });
    const text = verdict.details.join('\n');
    expect(text).toMatch(/Duplication repeats real records, so its 50 exact copies of class squall are expected by construction/);
    expect(text).toMatch(/Warning: the VAE made 2 exact copies/);
    expect(text).toMatch(/Warning: a classifier tells the VAE's records of class squall from real ones \(detection AUC 0\.950/);
    expect(text).toMatch(/closer to train records than new real records do/);
    expect(text).toMatch(/The VAE kept 40 of the 50 records/);
  });

  it('says the VAE cannot help when it made nothing', () => {
    const verdict = writeVerdict({ generators: [result('none', base, base), result('vae', base, base, { syntheticCounts: { squall: 0 } })], requested: { squall: 50 } });
    expect(verdict.headline).toMatch(/made no synthetic records/);
    expect(verdict.details.join('\n')).toMatch(/no records of class squall/);
  });
});
