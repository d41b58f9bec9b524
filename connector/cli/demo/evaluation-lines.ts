/**
 * The few lines of a quality report the demo prints: per classifier and rare class, the PR-AUC on the
 * real holdout when trained on real readings alone, then with the VAE's synthetic readings added, with
 * SMOTE's beside them for comparison. Gains, losses and ties are shown as they are; the report itself
 * has the intervals and the verdict's reasons.
 */
import type { GeneratorResult, QualityReport } from '../../../model/quality/quality-report.js';

const CLASSIFIER_NAMES = { 'logistic-regression': 'logistic regression', 'random-forest': 'random forest' } as const;

export function evaluationLines(report: QualityReport): string[] {
  const byName = new Map(report.generators.map((result) => [result.generator, result]));
  const none = byName.get('none');
  const vae = byName.get('vae');
  if (none === undefined || vae === undefined) return [];
  const smote = byName.get('smote');
  const lines = ['PR-AUC on the held-out real readings, trained on real readings only → with the VAE\'s added (SMOTE\'s for comparison):'];
  for (const usefulness of vae.usefulness) {
    const classes = usefulness.classes.map((scores) => {
      const before = prAuc(none, usefulness.classifier, scores.className);
      const withSmote = smote === undefined ? undefined : prAuc(smote, usefulness.classifier, scores.className);
      const comparison = withSmote === undefined ? '' : ` (${fixed(withSmote)})`;
      return `${scores.className} ${fixed(before)} → ${fixed(scores.prAuc.estimate)}${comparison}`;
    });
    lines.push(`  ${`${CLASSIFIER_NAMES[usefulness.classifier]}:`.padEnd(21)}${classes.join(' · ')}`);
  }
  return lines;
}

function prAuc(result: GeneratorResult, classifier: keyof typeof CLASSIFIER_NAMES, className: string): number | undefined {
  return result.usefulness.find((entry) => entry.classifier === classifier)?.classes.find((scores) => scores.className === className)?.prAuc.estimate;
}

function fixed(value: number | undefined): string {
  return value === undefined ? '—' : value.toFixed(2);
}

