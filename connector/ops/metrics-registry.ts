/**
 * A small Prometheus registry: counters, gauges and histograms with labels, rendered as text format
 * 0.0.4 (prometheus/docs `content/docs/instrumenting/exposition_formats.md`). Families render in
 * registration order and series in first-use order, so repeated scrapes read the same way.
 */
import { RaretideError } from '../../config/errors.js';
import { escapeHelp, formatLabels, formatSampleValue, LABEL_NAME, METRIC_NAME } from './exposition-format.js';

export type MetricType = 'counter' | 'gauge' | 'histogram';

export interface MetricDefinition<Label extends string = string> {
  /** With the unit as suffix and `_total` on counters (Prometheus naming practice). */
  readonly name: string;
  readonly type: MetricType;
  /** One line saying what is measured and in which unit. */
  readonly help: string;
  readonly labels: readonly Label[];
  /** Histograms only: increasing finite upper bounds; the `+Inf` bucket is always added. */
  readonly buckets?: readonly number[];
}

/** One value per declared label name. */
export type LabelValues<Label extends string> = { readonly [Name in Label]: string };

/** Runs before each rendering, to refresh values read on demand (memory, lag). */
export type CollectHook = () => void;

function definitionError(name: string, problem: string): RaretideError {
  return new RaretideError('metrics.definition', `metric ${name}: ${problem}`);
}

/** Shared by the three kinds: label checking and the series table. */
abstract class MetricFamily<Label extends string, Series> {
  protected readonly series = new Map<string, { readonly labels: readonly (readonly [string, string])[]; readonly state: Series }>();

  constructor(readonly definition: MetricDefinition<Label>) {}

  /** Creates the series at zero if absent, so it is exported before its first event. */
  initialize(values: LabelValues<Label>): void {
    this.seriesFor(values);
  }

  /** Forgets one series (a partition no longer owned, a model replaced). */
  remove(values: LabelValues<Label>): void {
    this.series.delete(this.keyOf(values));
  }

  /** Forgets every series. */
  clear(): void {
    this.series.clear();
  }

  protected existing(values: LabelValues<Label>): Series | undefined {
    return this.series.get(this.keyOf(values))?.state;
  }

  protected seriesFor(values: LabelValues<Label>): Series {
    const names = this.definition.labels;
    const given = Object.keys(values);
    const pairs = names.map((name) => {
      const value = (values as Record<string, unknown>)[name];
      if (typeof value !== 'string') {
        throw new RaretideError('metrics.labels', `metric ${this.definition.name}: label ${name} needs a string value, got ${String(value)}`);
      }
      return [name, value] as const;
    });
    if (given.length !== names.length) {
      const extra = given.filter((name) => !names.includes(name as Label));
      throw new RaretideError('metrics.labels', `metric ${this.definition.name}: unknown label(s) ${extra.join(', ')}; its labels are [${names.join(', ')}]`);
    }
    const key = this.keyOf(values);
    let entry = this.series.get(key);
    if (entry === undefined) {
      entry = { labels: pairs, state: this.newSeries() };
      this.series.set(key, entry);
    }
    return entry.state;
  }

  render(): string {
    const { name, type, help } = this.definition;
    let text = `# HELP ${name} ${escapeHelp(help)}\n# TYPE ${name} ${type}\n`;
    for (const { labels, state } of this.series.values()) text += this.renderSeries(labels, state);
    return text;
  }

  private keyOf(values: LabelValues<Label>): string {
    return this.definition.labels.map((name) => values[name]).join('\u0000');
  }

  protected abstract newSeries(): Series;
  protected abstract renderSeries(labels: readonly (readonly [string, string])[], state: Series): string;
}

/** A count that only goes up from process start. */
export class Counter<Label extends string> extends MetricFamily<Label, { value: number }> {
  inc(labels: LabelValues<Label>, amount = 1): void {
    if (!Number.isFinite(amount) || amount < 0) {
      throw new RaretideError('metrics.value', `counter ${this.definition.name} can only grow by a finite amount ≥ 0, got ${amount}`);
    }
    this.seriesFor(labels).value += amount;
  }

  /** The current count, or 0 for a series never touched. */
  value(labels: LabelValues<Label>): number {
    return this.existing(labels)?.value ?? 0;
  }

  protected newSeries(): { value: number } {
    return { value: 0 };
  }

  protected renderSeries(labels: readonly (readonly [string, string])[], state: { value: number }): string {
    return `${this.definition.name}${formatLabels(labels)} ${formatSampleValue(state.value)}\n`;
  }
}

/** A value that goes up and down; absent until first set. */
export class Gauge<Label extends string> extends MetricFamily<Label, { value: number }> {
  set(labels: LabelValues<Label>, value: number): void {
    this.seriesFor(labels).value = value;
  }

  /** The current value, or undefined for a series never set. */
  value(labels: LabelValues<Label>): number | undefined {
    return this.existing(labels)?.value;
  }

  protected newSeries(): { value: number } {
    return { value: 0 };
  }

  protected renderSeries(labels: readonly (readonly [string, string])[], state: { value: number }): string {
    return `${this.definition.name}${formatLabels(labels)} ${formatSampleValue(state.value)}\n`;
  }
}

interface HistogramSeries {
  /** Observations per bucket, not cumulative; the last slot is the `+Inf` bucket. */
  readonly counts: number[];
  sum: number;
  count: number;
}

/** Observations counted into buckets by inclusive upper bound (`le`), with their sum and count. */
export class Histogram<Label extends string> extends MetricFamily<Label, HistogramSeries> {
  private readonly bounds: readonly number[];

  constructor(definition: MetricDefinition<Label>) {
    super(definition);
    this.bounds = definition.buckets ?? [];
  }

  observe(labels: LabelValues<Label>, value: number): void {
    const series = this.seriesFor(labels);
    let index = this.bounds.findIndex((bound) => value <= bound);
    if (index === -1) index = this.bounds.length;
    series.counts[index]! += 1;
    series.sum += value;
    series.count += 1;
  }

  /** Cumulative bucket counts (the `+Inf` one last), sum and count, as they will be rendered. */
  snapshot(labels: LabelValues<Label>): { readonly buckets: readonly number[]; readonly sum: number; readonly count: number } {
    const series = this.existing(labels) ?? this.newSeries();
    return { buckets: cumulative(series.counts), sum: series.sum, count: series.count };
  }

  protected newSeries(): HistogramSeries {
    return { counts: new Array<number>(this.bounds.length + 1).fill(0), sum: 0, count: 0 };
  }

  protected renderSeries(labels: readonly (readonly [string, string])[], state: HistogramSeries): string {
    const { name } = this.definition;
    const running = cumulative(state.counts);
    let text = '';
    running.forEach((count, index) => {
      const bound = index < this.bounds.length ? formatSampleValue(this.bounds[index]!) : '+Inf';
      text += `${name}_bucket${formatLabels([...labels, ['le', bound]])} ${count}\n`;
    });
    text += `${name}_sum${formatLabels(labels)} ${formatSampleValue(state.sum)}\n`;
    text += `${name}_count${formatLabels(labels)} ${state.count}\n`;
    return text;
  }
}

function cumulative(counts: readonly number[]): number[] {
  let total = 0;
  return counts.map((count) => (total += count));
}

export class MetricsRegistry {
  private readonly families: MetricFamily<string, unknown>[] = [];
  private readonly hooks: CollectHook[] = [];

  counter<Label extends string>(definition: MetricDefinition<Label> & { readonly type: 'counter' }): Counter<Label> {
    const family = new Counter(this.checked(definition));
    // An unlabelled counter shows 0 from the start, so rate() has a first point (Prometheus instrumentation practice).
    if (definition.labels.length === 0) family.initialize({} as LabelValues<Label>);
    return this.add(family);
  }

  gauge<Label extends string>(definition: MetricDefinition<Label> & { readonly type: 'gauge' }): Gauge<Label> {
    return this.add(new Gauge(this.checked(definition)));
  }

  histogram<Label extends string>(definition: MetricDefinition<Label> & { readonly type: 'histogram' }): Histogram<Label> {
    const family = new Histogram(this.checked(definition));
    // Likewise an unlabelled histogram shows empty buckets from the start.
    if (definition.labels.length === 0) family.initialize({} as LabelValues<Label>);
    return this.add(family);
  }

  beforeRender(hook: CollectHook): void {
    this.hooks.push(hook);
  }

  /** The whole exposition; ends with a line feed as the format requires. */
  render(): string {
    for (const hook of this.hooks) hook();
    return this.families.map((family) => family.render()).join('');
  }

  private add<Family extends MetricFamily<string, unknown>>(family: Family): Family {
    this.families.push(family);
    return family;
  }

  private checked<Label extends string>(definition: MetricDefinition<Label>): MetricDefinition<Label> {
    const { name, labels, buckets, type } = definition;
    if (!METRIC_NAME.test(name)) throw definitionError(name, 'the name must match [a-zA-Z_:][a-zA-Z0-9_:]*');
    if (this.families.some((family) => family.definition.name === name)) throw definitionError(name, 'registered twice; define each metric once');
    for (const label of labels) {
      if (!LABEL_NAME.test(label)) throw definitionError(name, `label ${label} must match [a-zA-Z_][a-zA-Z0-9_]* and not start with __`);
    }
    if (new Set(labels).size !== labels.length) throw definitionError(name, `a label is declared twice in [${labels.join(', ')}]`);
    if (type === 'histogram') {
      if (labels.includes('le' as Label)) throw definitionError(name, 'label le is reserved for histogram buckets');
      const bounds = buckets ?? [];
      if (bounds.length === 0 || bounds.some((bound, index) => !Number.isFinite(bound) || (index > 0 && bound <= bounds[index - 1]!))) {
        throw definitionError(name, `buckets must be a non-empty, strictly increasing list of finite numbers, got [${bounds.join(', ')}]`);
      }
    }
    return definition;
  }
}
