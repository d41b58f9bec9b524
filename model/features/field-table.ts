import type { CategoricalPlan, ContinuousPlan, FieldInfo, FieldPlan, LabelPlan, RecordPlan } from './field-plan.js';
import { EmpiricalMarginal } from './marginal.js';

/** One row of the field table that `raretide inspect` prints for users to review. */
export interface FieldTableRow {
  readonly path: string;
  readonly avroType: string;
  readonly policy: FieldInfo['policy'];
  /**
   * The features the field occupies: `presence` for a nullable record (its fields follow on their own
   * rows), `presence + …` for a nullable value, `none` for copied, fresh, null and label fields.
   */
  readonly encoding: 'continuous' | 'categorical' | 'presence' | 'presence + continuous' | 'presence + categorical' | 'none';
  readonly width: number;
  /** Position of the field's first feature, when it has features. */
  readonly offset?: number;
  readonly summary?: FieldSummary;
  /** Why the policy: `inferred: …`, `set in config` or `label: …`. */
  readonly reason: string;
}

export type FieldSummary =
  | {
      readonly kind: 'quantiles';
      /** Distinct values in the sample, and whether every one is stored (exact round trip). */
      readonly distinct: number;
      readonly exact: boolean;
      readonly min: number;
      readonly lowerQuartile: number;
      readonly median: number;
      readonly upperQuartile: number;
      readonly max: number;
    }
  | { readonly kind: 'categories'; readonly categories: readonly { readonly name: string; readonly count: number }[] }
  | { readonly kind: 'classes'; readonly classes: readonly { readonly name: string; readonly count: number }[] };

export interface FieldTable {
  readonly width: number;
  readonly sampleSize: number;
  readonly labelPath: string | undefined;
  readonly rows: readonly FieldTableRow[];
}

/** Lists every field of a plan in schema order, with its features and a summary of the sample. */
export function describePlan(plan: RecordPlan, label: LabelPlan | undefined, sampleSize: number): FieldTable {
  const rows: FieldTableRow[] = [];
  let offset = 0;
  const visit = (node: FieldPlan): void => {
    switch (node.kind) {
      case 'record':
        for (const field of node.fields) visit(field.plan);
        return;
      case 'nullable': {
        const value = node.value;
        if (value.kind === 'continuous' || value.kind === 'categorical') {
          const { width, summary } = valueFeatures(value);
          rows.push({ ...node.info, encoding: `presence + ${value.kind}`, width: 1 + width, offset, summary, reason: value.info.reason });
          offset += 1 + width;
          return;
        }
        rows.push({ ...node.info, encoding: 'presence', width: 1, offset });
        offset += 1;
        visit(value);
        return;
      }
      case 'continuous':
      case 'categorical': {
        const { width, summary } = valueFeatures(node);
        rows.push({ ...node.info, encoding: node.kind, width, offset, summary });
        offset += width;
        return;
      }
      case 'copy':
        if (label !== undefined && node.info.policy === 'label') {
          rows.push({ ...node.info, encoding: 'none', width: 0, summary: { kind: 'classes', classes: label.classes } });
        } else {
          rows.push({ ...node.info, encoding: 'none', width: 0 });
        }
        return;
      case 'fresh':
      case 'null':
        rows.push({ ...node.info, encoding: 'none', width: 0 });
        return;
    }
  };
  visit(plan);
  return { width: offset, sampleSize, labelPath: label?.path, rows };
}

function valueFeatures(plan: ContinuousPlan | CategoricalPlan): { width: number; summary: FieldSummary } {
  if (plan.kind === 'categorical') {
    const categories = plan.categories.map((name, i) => ({ name, count: plan.counts[i] ?? 0 }));
    return { width: categories.length, summary: { kind: 'categories', categories } };
  }
  const marginal = new EmpiricalMarginal(plan.marginal);
  return {
    width: 1,
    summary: {
      kind: 'quantiles',
      distinct: plan.marginal.distinct,
      exact: plan.marginal.distinct === plan.marginal.values.length,
      min: marginal.min,
      lowerQuartile: marginal.valueAt(0.25),
      median: marginal.valueAt(0.5),
      upperQuartile: marginal.valueAt(0.75),
      max: marginal.max,
    },
  };
}

function formatNumber(value: number): string {
  if (Number.isInteger(value) && Math.abs(value) < 1e15) return String(value);
  return String(Number(value.toPrecision(4)));
}

function formatShares(entries: readonly { name: string; count: number }[], shown: number): string {
  const total = entries.reduce((sum, entry) => sum + entry.count, 0);
  const top = [...entries].sort((a, b) => b.count - a.count).slice(0, shown);
  const parts = top.map((entry) => `${entry.name} ${total === 0 ? 0 : Math.round((100 * entry.count) / total)}%`);
  return parts.join(', ') + (entries.length > shown ? `, … (${entries.length})` : '');
}

/** The summary column's text. */
export function formatSummary(summary: FieldSummary | undefined): string {
  if (summary === undefined) return '';
  switch (summary.kind) {
    case 'quantiles':
      return (
        `min ${formatNumber(summary.min)} · q1 ${formatNumber(summary.lowerQuartile)} · median ${formatNumber(summary.median)}` +
        ` · q3 ${formatNumber(summary.upperQuartile)} · max ${formatNumber(summary.max)}` +
        ` (${summary.distinct} distinct${summary.exact ? ', all stored' : ''})`
      );
    case 'categories':
      return formatShares(summary.categories, 4);
    case 'classes':
      return `classes: ${summary.classes.map((entry) => `${entry.name} ${entry.count}`).join(', ')}`;
  }
}

const MAX_TYPE_TEXT = 40;

function shorten(text: string, limit: number): string {
  return text.length <= limit ? text : `${text.slice(0, limit - 1)}…`;
}

/** Renders the table as aligned plain text (no colours), one field per line, then a totals line. */
export function renderFieldTable(table: FieldTable): string {
  const header = ['field', 'type', 'policy', 'encoding', 'width', 'summary or reason'];
  const lines = table.rows.map((row) => [
    row.path,
    shorten(row.avroType, MAX_TYPE_TEXT),
    row.policy,
    row.encoding === 'none' ? '-' : row.encoding,
    String(row.width),
    formatSummary(row.summary) || row.reason,
  ]);
  const widths = header.map((title, column) => Math.max(title.length, ...lines.map((line) => line[column]!.length)));
  const format = (cells: readonly string[]): string =>
    cells.map((cell, column) => (column === cells.length - 1 ? cell : cell.padEnd(widths[column]!))).join('  ').trimEnd();
  const learned = table.rows.filter((row) => row.policy === 'learn' && row.encoding !== 'presence').length;
  const footer =
    `${table.width} features from ${learned} learned fields of ${table.rows.length}; sample of ${table.sampleSize} records` +
    (table.labelPath === undefined ? '; no label field' : `; label \`${table.labelPath}\``);
  return [format(header), ...lines.map(format), '', footer].join('\n') + '\n';
}
