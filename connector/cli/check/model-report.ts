/**
 * The text `raretide check` prints about the model, below the config summary: what the model is, the
 * schema checks it passed, warnings, and the field policies it was fitted with (the table `inspect`
 * prints before a fit).
 */
import { renderFieldTable } from '../../../model/features/index.js';
import { alignedLines } from '../config-summary.js';
import type { ModelCheckResult, PresentModel } from './model-check.js';

export function renderModelCheck(check: ModelCheckResult, configPath: string): string {
  if (check.kind === 'absent') {
    return `model: none in ${check.directory} yet; \`raretide fit --config ${configPath}\` makes one from source.topic (or --file <history.avro>); run needs it\n`;
  }
  const warnings = check.warnings.map((warning) => `warning: ${warning}\n`).join('');
  return `${alignedLines(`model ok: ${check.directory}`, modelLines(check))}${warnings}\nfields as fitted:\n${renderFieldTable(check.fields)}`;
}

function modelLines(check: PresentModel): [string, string][] {
  const { records } = check;
  const skipped = records.read - records.trained;
  return [
    ['id', check.id],
    ['trained on', `${records.trained} of ${records.read} records${skipped > 0 ? ` (${skipped} without a known class)` : ''}, classes from field ${check.labelPath}`],
    ['classes', check.classes.map(({ name, count }) => `${name} ${count}`).join(', ')],
    ...check.schemaChecks.map(({ subject, text }): [string, string] => [subject, text]),
  ];
}
