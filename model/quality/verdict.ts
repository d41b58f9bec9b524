/**
 * The plain-language verdict of a report. The rules:
 *
 * 1. The VAE is compared with `none` (real records alone) and with the best baseline (of duplication,
 *    SMOTE and the Gaussian copula, the one with the highest mean PR-AUC estimate) on minority F1 and
 *    PR-AUC, for every classifier and rare class: a comparison.
 * 2. A comparison counts as better only when the VAE's 95 % interval lies wholly above the other's,
 *    worse only when wholly below; overlapping intervals are a tie. (Both intervals come from the
 *    same holdout resamples, so requiring them apart is conservative: common practice, erring towards
 *    "does not help".)
 * 3. Headline against `none`: helps when some comparison is better and none worse; makes things
 *    worse in the mirror case; mixed when both occur; otherwise "does not help here".
 * 4. Warnings: any exact copy from a generator other than duplication (which copies by construction,
 *    said as such); a VAE detection AUC of DETECTION_WARNING or more (rule of thumb: a classifier
 *    then spots nearly every synthetic record); VAE records whose median distance to the closest train
 *    record is under half the holdout's (rule of thumb for memorisation); classes the VAE made fewer
 *    or no records of.
 */
import type { ClassScores, GeneratorName, GeneratorResult, Interval, Verdict } from './quality-report.js';

export const DETECTION_WARNING = 0.9;
export const MEMORISATION_RATIO = 0.5;
const BASELINES: readonly GeneratorName[] = ['duplication', 'smote', 'gaussian-copula'];
const METRICS = [
  ['f1', 'F1'],
  ['prAuc', 'PR-AUC'],
] as const;
const CLASSIFIER_TEXT = { 'logistic-regression': 'logistic regression', 'random-forest': 'random forest' } as const;

type Outcome = 'better' | 'worse' | 'tie';

export interface VerdictInput {
  readonly generators: readonly GeneratorResult[];
  /** Records each generator was asked for, per rare class (k per real rare train record). */
  readonly requested: Readonly<Record<string, number>>;
}

export function compareIntervals(ours: Interval, theirs: Interval): Outcome {
  if (ours.low > theirs.high) return 'better';
  if (ours.high < theirs.low) return 'worse';
  return 'tie';
}

export function writeVerdict({ generators, requested }: VerdictInput): Verdict {
  const byName = new Map(generators.map((result) => [result.generator, result]));
  const vae = byName.get('vae');
  const none = byName.get('none');
  if (vae === undefined || none === undefined) throw new Error('verdict: the report needs the `none` and `vae` results');
  const details: string[] = [];
  const vaeTotal = Object.values(vae.syntheticCounts).reduce((sum, count) => sum + count, 0);
  if (vaeTotal === 0) {
    return {
      headline: 'The VAE made no synthetic records of the rare classes, so it cannot help here.',
      details: [...countNotes(vae, requested), ...copyNotes(generators)],
    };
  }

  const againstNone = outcomes(vae, none);
  const headline = headlineFor(againstNone.map(({ outcome }) => outcome));
  const baseline = bestBaseline(generators);
  if (baseline !== undefined) details.push(baselineSentence(baseline, outcomes(vae, baseline).map(({ outcome }) => outcome)));
  for (const { text } of againstNone) details.push(text);
  details.push(...countNotes(vae, requested), ...copyNotes(generators), ...detectionNotes(vae), ...distanceNotes(vae), ...labelNotes(vae, none));
  return { headline, details };
}

function headlineFor(results: readonly Outcome[]): string {
  const better = results.filter((outcome) => outcome === 'better').length;
  const worse = results.filter((outcome) => outcome === 'worse').length;
  const of = `${results.length} comparisons of minority F1 and PR-AUC`;
  if (better > 0 && worse > 0) return `Mixed result: the VAE's records help on ${better} and hurt on ${worse} of ${of} against real records alone.`;
  if (better > 0) return `Augmenting with the VAE helps here: it beats real records alone on ${better} of ${of}, with intervals apart.`;
  if (worse > 0) return `Augmenting with the VAE makes things worse here: it falls below real records alone on ${worse} of ${of}.`;
  return 'Augmenting with the VAE does not help here: its minority F1 and PR-AUC intervals overlap those of training on real records alone.';
}

function outcomes(ours: GeneratorResult, theirs: GeneratorResult): { outcome: Outcome; text: string }[] {
  return ours.usefulness.flatMap((usefulness) => {
    const other = theirs.usefulness.find((candidate) => candidate.classifier === usefulness.classifier);
    return usefulness.classes.flatMap((scores) => {
      const otherScores = other?.classes.find((candidate) => candidate.className === scores.className);
      if (otherScores === undefined) return [];
      return METRICS.map(([metric, label]) => ({
        outcome: compareIntervals(scores[metric], otherScores[metric]),
        text: `${CLASSIFIER_TEXT[usefulness.classifier]}, ${scores.className}: ${label} ${formatInterval(scores[metric])} with the VAE, ${formatInterval(otherScores[metric])} on real records alone.`,
      }));
    });
  });
}

/** The baseline with the highest mean PR-AUC estimate over classifiers and rare classes. */
function bestBaseline(generators: readonly GeneratorResult[]): GeneratorResult | undefined {
  const meanPrAuc = (result: GeneratorResult) => {
    const scores: ClassScores[] = result.usefulness.flatMap((usefulness) => [...usefulness.classes]);
    return scores.reduce((sum, s) => sum + s.prAuc.estimate, 0) / Math.max(1, scores.length);
  };
  return generators.filter((result) => BASELINES.includes(result.generator)).sort((a, b) => meanPrAuc(b) - meanPrAuc(a))[0];
}

function baselineSentence(baseline: GeneratorResult, results: readonly Outcome[]): string {
  const better = results.filter((outcome) => outcome === 'better').length;
  const worse = results.filter((outcome) => outcome === 'worse').length;
  const name = baseline.generator;
  if (better > 0 && worse === 0) return `Against the best baseline (${name}) the VAE is ahead on ${better} of ${results.length} comparisons and behind on none.`;
  if (worse > 0 && better === 0) return `The best baseline (${name}) does better than the VAE on ${worse} of ${results.length} comparisons and worse on none.`;
  if (worse > 0) return `Against the best baseline (${name}) the VAE is ahead on ${better} and behind on ${worse} of ${results.length} comparisons.`;
  return `The VAE ties the best baseline (${name}): their F1 and PR-AUC intervals overlap everywhere.`;
}

function countNotes(vae: GeneratorResult, requested: Readonly<Record<string, number>>): string[] {
  return Object.entries(requested).flatMap(([className, asked]) => {
    const made = vae.syntheticCounts[className] ?? 0;
    if (made === 0) return [`The VAE made no records of class ${className} (the model may not know the class, or its privacy guard dropped every draw).`];
    if (made < asked) return [`The VAE kept ${made} of the ${asked} records of class ${className} asked for: its privacy guard drops copies and near copies.`];
    return [];
  });
}

function copyNotes(generators: readonly GeneratorResult[]): string[] {
  return generators.flatMap((result) =>
    (result.privacy ?? []).flatMap(({ className, exactCopies }) => {
      if (exactCopies === 0) return [];
      if (result.generator === 'duplication') {
        return [`Duplication repeats real records, so its ${exactCopies} exact copies of class ${className} are expected by construction, not a leak.`];
      }
      const who = result.generator === 'vae' ? 'Warning: the VAE' : `Note: ${result.generator}`;
      return [`${who} made ${exactCopies} exact ${exactCopies === 1 ? 'copy' : 'copies'} of real train records of class ${className}.`];
    }),
  );
}

function detectionNotes(vae: GeneratorResult): string[] {
  return (vae.fidelity ?? []).flatMap(({ className, detectionAuc }) =>
    detectionAuc.estimate >= DETECTION_WARNING
      ? [`Warning: a classifier tells the VAE's records of class ${className} from real ones (detection AUC ${formatInterval(detectionAuc)}): they are easy to spot.`]
      : [],
  );
}

function distanceNotes(vae: GeneratorResult): string[] {
  return (vae.privacy ?? []).flatMap(({ className, syntheticToTrain, holdoutToTrain }) =>
    syntheticToTrain.p50 < MEMORISATION_RATIO * holdoutToTrain.p50
      ? [
          `Warning: the VAE's records of class ${className} sit closer to train records than new real records do ` +
            `(median distance ${syntheticToTrain.p50.toFixed(3)} against ${holdoutToTrain.p50.toFixed(3)} for the holdout), a sign of memorisation.`,
        ]
      : [],
  );
}

function labelNotes(vae: GeneratorResult, none: GeneratorResult): string[] {
  const forest = none.usefulness.find((usefulness) => usefulness.classifier === 'random-forest');
  return (vae.fidelity ?? []).map(({ className, labelFidelity }) => {
    const recall = forest?.classes.find((scores) => scores.className === className)?.recall.estimate;
    const yardstick = recall === undefined ? '' : ` (it finds ${percent(recall)} of the real holdout records of the class)`;
    return `A random forest trained on real records assigns ${percent(labelFidelity)} of the VAE's records of class ${className} to that class${yardstick}.`;
  });
}

function formatInterval(interval: Interval): string {
  return `${interval.estimate.toFixed(3)} [${interval.low.toFixed(3)}, ${interval.high.toFixed(3)}]`;
}

function percent(share: number): string {
  return `${Math.round(share * 100)} %`;
}
