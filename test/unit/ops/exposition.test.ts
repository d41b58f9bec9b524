// Expected texts are written by hand from Prometheus' "Exposition formats" page, section "Text format
// details" (prometheus/docs, content/docs/instrumenting/exposition_formats.md, format version 0.0.4).
import { describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import { escapeHelp, escapeLabelValue, formatSampleValue } from '../../../connector/ops/exposition-format.js';
import { MetricsRegistry } from '../../../connector/ops/metrics-registry.js';

describe('text format 0.0.4 pieces', () => {
  it('escapes backslash, double quote and line feed in label values, and only backslash and line feed in HELP', () => {
    // "label_value can be any sequence of UTF-8 characters, but the backslash, the double-quote, and the
    // line-feed characters have to be escaped as \\, \", and \n" / HELP: "backslash and the line-feed".
    expect(escapeLabelValue('C:\\DIR\\FILE.TXT')).toBe('C:\\\\DIR\\\\FILE.TXT');
    expect(escapeLabelValue('Cannot find file:\n"FILE.TXT"')).toBe('Cannot find file:\\n\\"FILE.TXT\\"');
    expect(escapeLabelValue('naïve ✓')).toBe('naïve ✓');
    expect(escapeHelp('a \\ b\n"c"')).toBe('a \\\\ b\\n"c"');
  });

  it('spells values as Go ParseFloat reads them: +Inf, -Inf, NaN', () => {
    // "value is a float ... In particular, Nan, +Inf, and -Inf are valid values."
    expect([Infinity, -Infinity, NaN, 0, -0, 12.47, 1e21, 5e-7].map(formatSampleValue)).toEqual(['+Inf', '-Inf', 'NaN', '0', '0', '12.47', '1e+21', '5e-7']);
  });
});

describe('MetricsRegistry rendering', () => {
  it('renders the escaping example of the format page', () => {
    const registry = new MetricsRegistry();
    const gauge = registry.gauge({ name: 'msdos_file_access_time_seconds', type: 'gauge', help: 'Access time.', labels: ['path', 'error'] });
    gauge.set({ path: 'C:\\DIR\\FILE.TXT', error: 'Cannot find file:\n"FILE.TXT"' }, 1.458255915e9);
    // The page's line, with the value spelled 1458255915 instead of 1.458255915e9 (the same float).
    expect(registry.render()).toBe(
      '# HELP msdos_file_access_time_seconds Access time.\n' +
        '# TYPE msdos_file_access_time_seconds gauge\n' +
        'msdos_file_access_time_seconds{path="C:\\\\DIR\\\\FILE.TXT",error="Cannot find file:\\n\\"FILE.TXT\\""} 1458255915\n',
    );
  });

  it('renders counters with labels in first-use order and an unlabelled counter at 0 before any event', () => {
    const registry = new MetricsRegistry();
    const requests = registry.counter({ name: 'http_requests_total', type: 'counter', help: 'The total number of HTTP requests.', labels: ['method', 'code'] });
    registry.counter({ name: 'restarts_total', type: 'counter', help: 'Restarts.', labels: [] });
    requests.inc({ method: 'post', code: '200' }, 1027);
    requests.inc({ method: 'post', code: '400' }, 3);
    requests.inc({ method: 'post', code: '200' });
    expect(registry.render()).toBe(
      '# HELP http_requests_total The total number of HTTP requests.\n' +
        '# TYPE http_requests_total counter\n' +
        'http_requests_total{method="post",code="200"} 1028\n' +
        'http_requests_total{method="post",code="400"} 3\n' +
        '# HELP restarts_total Restarts.\n' +
        '# TYPE restarts_total counter\n' +
        'restarts_total 0\n',
    );
  });

  it('renders histogram buckets cumulative with inclusive upper bounds, +Inf equal to _count, then _sum and _count', () => {
    // "Each bucket count of a histogram named x is given as a separate sample line with the name x_bucket
    // and a label {le="y"}"; "A histogram must have a bucket with {le="+Inf"}. Its value must be identical
    // to the value of x_count"; buckets "in increasing numerical order". Binary fractions keep the sum exact.
    const registry = new MetricsRegistry();
    const latency = registry.histogram({ name: 'job_duration_seconds', type: 'histogram', help: 'Job time.', labels: ['queue'], buckets: [0.25, 0.5, 1, 2.5] });
    for (const seconds of [0.125, 0.25, 0.75, 3, 0.5]) latency.observe({ queue: 'a"b' }, seconds);
    expect(registry.render()).toBe(
      '# HELP job_duration_seconds Job time.\n' +
        '# TYPE job_duration_seconds histogram\n' +
        'job_duration_seconds_bucket{queue="a\\"b",le="0.25"} 2\n' +
        'job_duration_seconds_bucket{queue="a\\"b",le="0.5"} 3\n' +
        'job_duration_seconds_bucket{queue="a\\"b",le="1"} 4\n' +
        'job_duration_seconds_bucket{queue="a\\"b",le="2.5"} 4\n' +
        'job_duration_seconds_bucket{queue="a\\"b",le="+Inf"} 5\n' +
        'job_duration_seconds_sum{queue="a\\"b"} 4.625\n' +
        'job_duration_seconds_count{queue="a\\"b"} 5\n',
    );
    expect(latency.snapshot({ queue: 'a"b' })).toEqual({ buckets: [2, 3, 4, 4, 5], sum: 4.625, count: 5 });
  });

  it('shows an unlabelled histogram with zero buckets before the first observation', () => {
    const registry = new MetricsRegistry();
    registry.histogram({ name: 'batch_size', type: 'histogram', help: 'Sizes.', labels: [], buckets: [1, 10] });
    expect(registry.render()).toBe(
      '# HELP batch_size Sizes.\n# TYPE batch_size histogram\n' +
        'batch_size_bucket{le="1"} 0\nbatch_size_bucket{le="10"} 0\nbatch_size_bucket{le="+Inf"} 0\nbatch_size_sum 0\nbatch_size_count 0\n',
    );
  });

  it('keeps gauges absent until set, and removes or clears series', () => {
    const registry = new MetricsRegistry();
    const lag = registry.gauge({ name: 'lag_records', type: 'gauge', help: 'Lag.', labels: ['partition'] });
    expect(registry.render()).toBe('# HELP lag_records Lag.\n# TYPE lag_records gauge\n');
    expect(lag.value({ partition: '0' })).toBeUndefined();
    lag.set({ partition: '0' }, 5);
    lag.set({ partition: '1' }, Infinity);
    expect(registry.render()).toContain('lag_records{partition="0"} 5\nlag_records{partition="1"} +Inf\n');
    lag.remove({ partition: '0' });
    expect(registry.render()).not.toContain('partition="0"');
    lag.clear();
    expect(registry.render()).toBe('# HELP lag_records Lag.\n# TYPE lag_records gauge\n');
  });

  it('runs collect hooks before rendering', () => {
    const registry = new MetricsRegistry();
    const memory = registry.gauge({ name: 'memory_bytes', type: 'gauge', help: 'Memory.', labels: [] });
    let reads = 0;
    registry.beforeRender(() => memory.set({}, ++reads * 1024));
    registry.render();
    expect(registry.render()).toContain('memory_bytes 2048\n');
  });
});

describe('MetricsRegistry refuses what the format cannot carry', () => {
  const cases: [string, (registry: MetricsRegistry) => void, RegExp][] = [
    ['a bad metric name', (r) => r.counter({ name: 'raretide-records', type: 'counter', help: '', labels: [] }), /name must match/],
    ['a reserved label name', (r) => r.gauge({ name: 'g', type: 'gauge', help: '', labels: ['__name'] }), /label __name/],
    ['le on a histogram', (r) => r.histogram({ name: 'h', type: 'histogram', help: '', labels: ['le'], buckets: [1] }), /le is reserved/],
    ['unsorted buckets', (r) => r.histogram({ name: 'h', type: 'histogram', help: '', labels: [], buckets: [1, 1] }), /strictly increasing/],
    ['no buckets', (r) => r.histogram({ name: 'h', type: 'histogram', help: '', labels: [] }), /strictly increasing/],
    [
      'the same name twice',
      (r) => {
        r.gauge({ name: 'g', type: 'gauge', help: '', labels: [] });
        r.counter({ name: 'g', type: 'counter', help: '', labels: [] });
      },
      /registered twice/,
    ],
    ['a negative counter step', (r) => r.counter({ name: 'c_total', type: 'counter', help: '', labels: [] }).inc({}, -1), /finite amount ≥ 0, got -1/],
    ['a missing label value', (r) => r.counter({ name: 'c_total', type: 'counter', help: '', labels: ['class'] }).inc({} as { class: string }), /label class needs a string value/],
    [
      'an undeclared label',
      (r) => r.counter({ name: 'c_total', type: 'counter', help: '', labels: ['class'] }).inc({ class: 'a', extra: 'b' } as { class: string }),
      /unknown label\(s\) extra/,
    ],
  ];
  it.each(cases)('refuses %s with a message naming it', (_, act, message) => {
    const attempt = () => act(new MetricsRegistry());
    expect(attempt).toThrow(RaretideError);
    expect(attempt).toThrow(message);
  });
});
