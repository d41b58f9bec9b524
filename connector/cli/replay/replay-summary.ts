/**
 * The end-of-replay summary: per class, the counts before (the input) and after (the combined stream
 * of originals and synthetic records, which the targets are shares of), against the targets; what the
 * output file holds; model id, seed and elapsed time. Printed, and written as JSON beside the output.
 */
import type { PipelineCounters } from '../../pipeline/accounting.js';
import type { ClassShare } from '../../pipeline/balance.js';
import { duration } from './progress-line.js';

export interface ClassSummary {
  readonly label: string;
  /** In the input: records of the class and their share of the labelled input. */
  readonly before: { readonly records: number; readonly share: number };
  /** In the combined stream (originals + synthetic): the balance's view. */
  readonly after: { readonly originals: number; readonly synthetic: number; readonly share: number };
  /** Records of the class written to the output (originals passed through + synthetic). */
  readonly written: number;
  readonly target: number | null;
  readonly status: ClassShare['status'];
  readonly note: string | null;
  readonly thinned: number;
  readonly guardDropped: number;
}

export interface ReplaySummary {
  readonly command: 'replay';
  readonly input: string;
  readonly output: string;
  readonly sidecars: Readonly<Record<string, string>>;
  readonly model: { readonly id: string; readonly directory: string };
  readonly seed: number;
  readonly temperature: number;
  readonly maxPerRecord: number;
  readonly includeOriginals: boolean;
  readonly provenance: string;
  readonly records: { readonly read: number; readonly written: number; readonly synthetic: number; readonly deadLettered: number };
  readonly classes: readonly ClassSummary[];
  readonly deadLetters: Readonly<Record<string, number>>;
  readonly guardDrops: PipelineCounters['guardDrops'];
  readonly rateWaitMs: number;
  readonly elapsedMs: number;
  readonly recordsPerSecond: number;
}

export interface SummaryInputs
  extends Pick<ReplaySummary, 'input' | 'output' | 'sidecars' | 'model' | 'seed' | 'temperature' | 'maxPerRecord' | 'includeOriginals' | 'provenance' | 'elapsedMs'> {
  readonly counters: PipelineCounters;
  readonly shares: readonly ClassShare[];
}

export function buildReplaySummary(inputs: SummaryInputs): ReplaySummary {
  const { counters, shares } = inputs;
  const consumed = counters.total('consumed');
  const classes = shares.map((share): ClassSummary => {
    const tally = counters.byClass.get(share.label);
    const records = tally?.consumed ?? 0;
    return {
      label: share.label,
      before: { records, share: consumed > 0 ? records / consumed : 0 },
      after: { originals: share.originals, synthetic: share.synthetic, share: share.share },
      written: (tally?.originalsEmitted ?? 0) + (tally?.synthetic ?? 0),
      target: share.target ?? null,
      status: share.status,
      note: share.note ?? null,
      thinned: tally?.thinned ?? 0,
      guardDropped: tally?.guardDropped ?? 0,
    };
  });
  const synthetic = counters.total('synthetic');
  return {
    command: 'replay',
    input: inputs.input,
    output: inputs.output,
    sidecars: inputs.sidecars,
    model: inputs.model,
    seed: inputs.seed,
    temperature: inputs.temperature,
    maxPerRecord: inputs.maxPerRecord,
    includeOriginals: inputs.includeOriginals,
    provenance: inputs.provenance,
    records: { read: counters.records, written: counters.total('originalsEmitted') + synthetic, synthetic, deadLettered: counters.deadLettered() },
    classes,
    deadLetters: Object.fromEntries([...counters.deadLetters].sort(([a], [b]) => (a < b ? -1 : 1))),
    guardDrops: counters.guardDrops,
    rateWaitMs: counters.rateWaitMs,
    elapsedMs: Math.round(inputs.elapsedMs),
    recordsPerSecond: inputs.elapsedMs > 0 ? Math.round((counters.records * 1000) / inputs.elapsedMs) : 0,
  };
}

export function renderReplaySummary(summary: ReplaySummary): string {
  const lines = [
    `replayed ${summary.input} → ${summary.output} in ${duration(summary.elapsedMs)} (${summary.recordsPerSecond.toLocaleString('en-US')} records/s)`,
    `model ${summary.model.id}, seed ${summary.seed}, temperature ${summary.temperature}, k ≤ ${summary.maxPerRecord}`,
    `records: ${summary.records.read} read, ${summary.records.written} written (${summary.records.synthetic} synthetic), ${summary.records.deadLettered} dead-lettered`,
    'per class: before = input records, after = originals + synthetic (the stream the targets are shares of)',
  ];
  const rows = [
    ['class', 'before', 'share', 'after', 'share', 'target'],
    ...summary.classes.map((entry) => [
      entry.label,
      String(entry.before.records),
      percent(entry.before.share),
      String(Math.round(entry.after.originals + entry.after.synthetic)),
      percent(entry.after.share),
      entry.target === null ? '—' : `${percent(entry.target)} ${entry.status}`,
    ]),
  ];
  const widths = rows[0]!.map((_, column) => Math.max(...rows.map((row) => row[column]!.length)));
  rows.forEach((row, index) => {
    lines.push(row.map((cell, column) => (column === 0 || column === 5 ? cell.padEnd(widths[column]!) : cell.padStart(widths[column]!))).join('  ').trimEnd());
    const note = index === 0 ? null : summary.classes[index - 1]!.note;
    if (note !== null) lines.push(`  ${note}`);
  });
  const drops = summary.guardDrops;
  const dropped = drops.exactCopies + drops.nearSource + drops.nearClassRow + drops.invalid;
  if (dropped > 0) {
    lines.push(`guard dropped ${dropped} synthetic records (exact copies ${drops.exactCopies}, near source ${drops.nearSource}, near class ${drops.nearClassRow}, invalid ${drops.invalid}); later records made up for them`);
  }
  for (const [code, count] of Object.entries(summary.deadLetters)) lines.push(`dead letters: ${count} × ${code} (see ${summary.sidecars.deadLetters ?? 'the dead-letter output'})`);
  return `${lines.join('\n')}\n`;
}

function percent(share: number): string {
  return `${(share * 100).toFixed(2)} %`;
}
