/**
 * The reliability suite's own parts, checked without a broker: the least-squares trend behind the soak's
 * flatness rules, the kernel socket-table parser behind the bind-address check, the fuzz oracle, and the
 * row and clean-up bookkeeping. (They need no Kafka; they sit here because test/reliability/ is run
 * from the integration project.)
 */
import { readFile } from 'node:fs/promises';

import avro from 'avsc';
import { describe, expect, it } from 'vitest';

import { CleanupStack } from '../reliability/cleanup-stack.js';
import { FUZZ_KINDS, fuzzPayloads, shouldServe } from '../reliability/fuzz-payloads.js';
import { isLoopback, parseProcNetTcp } from '../reliability/listening-sockets.js';
import { renderTable } from '../reliability/results-table.js';
import { RowRecorder } from '../reliability/scenario-row.js';
import { afterWarmUp, leastSquares, trendOf } from '../reliability/series-trend.js';
import { sorterEvents } from '../support/run-worker-scenario.js';
import { SORTER_EVENT_SCHEMA } from '../unit/pipeline/support/sorter-events.js';

describe('least-squares trend', () => {
  it("fits Anscombe's quartet: every series has y = 3.00 + 0.500 x", async () => {
    // Anscombe, "Graphs in Statistical Analysis", The American Statistician 27(1), 1973: the four data
    // sets share the regression line y = 3.00 + 0.500x (values from memory of the paper). The data are
    // vega-datasets' data/anscombe.json.
    const rows = JSON.parse(await readFile(new URL('../../node_modules/vega-datasets/data/anscombe.json', import.meta.url), 'utf8')) as { Series: string; X: number; Y: number }[];
    const series = [...new Set(rows.map((row) => row.Series))];
    expect(series).toEqual(['I', 'II', 'III', 'IV']);
    for (const name of series) {
      const fit = leastSquares(rows.filter((row) => row.Series === name).map((row) => ({ t: row.X, y: row.Y })));
      expect(fit.slope, name).toBeCloseTo(0.5, 3);
      expect(fit.intercept, name).toBeCloseTo(3.0, 2);
    }
  });

  it('reports the drift of the fitted line over the window, judged after the warm-up', () => {
    const samples = [0, 10, 20, 30, 40].map((t) => ({ t, y: 100 + 0.5 * t + (t === 0 ? 50 : 0) }));
    const judged = afterWarmUp(samples, 10);
    expect(judged.map(({ t }) => t)).toEqual([10, 20, 30, 40]);
    const trend = trendOf(judged);
    expect(trend.slope).toBeCloseTo(0.5, 12);
    expect(trend.drift).toBeCloseTo(15, 12);
    expect(trendOf([{ t: 0, y: 11 }, { t: 5, y: 11 }, { t: 9, y: 11 }])).toMatchObject({ slope: 0, drift: 0, min: 11, max: 11 });
    expect(() => leastSquares([{ t: 1, y: 1 }])).toThrow(/at least 2 samples/);
  });
});

describe('listening sockets from /proc/net/tcp', () => {
  // Rows in the layout of the kernel's Documentation/networking/proc_net_tcp.rst (from memory): address
  // words in host order (little-endian), port in hex, state 0A = LISTEN, 01 = ESTABLISHED.
  const tcp = [
    '  sl  local_address rem_address   st tx_queue rx_queue tr tm->when retrnsmt   uid  timeout inode',
    '   0: 0100007F:1F90 00000000:0000 0A 00000000:00000000 00:00000000 00000000     0        0 1001 1 0 100 0 0 10 0',
    '   1: 00000000:0016 00000000:0000 0A 00000000:00000000 00:00000000 00000000     0        0 1002 1 0 100 0 0 10 0',
    '   2: 0100007F:1F90 0100007F:D431 01 00000000:00000000 00:00000000 00000000     0        0 1003 1 0 100 0 0 10 0',
  ].join('\n');
  const tcp6 = [
    '  sl  local_address                         remote_address                        st tx_queue rx_queue tr tm->when retrnsmt   uid  timeout inode',
    '   0: 00000000000000000000000001000000:0050 00000000000000000000000000000000:0000 0A 00000000:00000000 00:00000000 00000000     0        0 2001 1 0 100 0 0 10 0',
    '   1: 0000000000000000FFFF00000100007F:A3F3 00000000000000000000000000000000:0000 0A 00000000:00000000 00:00000000 00000000     0        0 2002 1 0 100 0 0 10 0',
    '   2: 00000000000000000000000000000000:01BB 00000000000000000000000000000000:0000 0A 00000000:00000000 00:00000000 00000000     0        0 2003 1 0 100 0 0 10 0',
  ].join('\n');

  it('reads listening IPv4 and IPv6 sockets and skips the others', () => {
    expect(parseProcNetTcp(tcp)).toEqual([
      { address: '127.0.0.1', port: 8080 },
      { address: '0.0.0.0', port: 22 },
    ]);
    expect(parseProcNetTcp(tcp6)).toEqual([
      { address: '0:0:0:0:0:0:0:1', port: 80 },
      { address: '0:0:0:0:0:ffff:7f00:1', port: 41971 },
      { address: '0:0:0:0:0:0:0:0', port: 443 },
    ]);
  });

  it('tells loopback from every-interface addresses', () => {
    expect(['127.0.0.1', '127.1.2.3', '0:0:0:0:0:0:0:1', '0:0:0:0:0:ffff:7f00:1'].map(isLoopback)).toEqual([true, true, true, true]);
    expect(['0.0.0.0', '10.0.0.5', '0:0:0:0:0:0:0:0', '0:0:0:0:0:ffff:a00:5'].map(isLoopback)).toEqual([false, false, false, false]);
  });
});

describe('fuzzed payloads and their oracle', () => {
  const type = avro.Type.forSchema(SORTER_EVENT_SCHEMA as unknown as avro.Schema);
  const classes = ['ok', 'jam', 'misroute'];

  it('makes the same payloads from the same seed, every kind in turn', () => {
    const first = fuzzPayloads(220, 5);
    expect(first.map((payload) => payload.value.toString('hex'))).toEqual(fuzzPayloads(220, 5).map((payload) => payload.value.toString('hex')));
    expect(new Set(first.map((payload) => payload.kind))).toEqual(new Set(FUZZ_KINDS));
  });

  it('serves valid labelled events, and refuses what the Avro spec or the worker rules forbid', () => {
    for (const event of sorterEvents(50, { jam: 0.2, misroute: 0.2 }, 9)) expect(shouldServe(type.toBuffer(event), classes)).toBe(true);
    const event = sorterEvents(1, { jam: 1 }, 9)[0]!;
    expect(shouldServe(type.toBuffer({ ...event, outcome: null }), classes)).toBe(false);
    expect(shouldServe(type.toBuffer({ ...event, outcome: 'retired' }), classes)).toBe(false);
    // Always broken by construction: nothing of these may ever be served.
    const alwaysRefused = new Set(['empty', 'truncated', 'trailing-bytes', 'huge-length', 'bad-union-index', 'bad-enum-index', 'non-finite-double']);
    const served = fuzzPayloads(1_100, 6).filter((payload) => alwaysRefused.has(payload.kind) && shouldServe(payload.value, classes));
    expect(served.map((payload) => payload.kind)).toEqual([]);
  });
});

describe('rows and clean-up', () => {
  it('keeps every figure and failed check of a row, and renders failures under it', () => {
    const row = new RowRecorder('9 example', 'what was checked');
    row.count('records', 1_000);
    row.count('records', 2_000);
    expect(row.check('holds', true)).toBe(true);
    expect(row.check('no duplicates', false, '3')).toBe(false);
    row.fail(new Error('boom'));
    const done = row.finish();
    expect(done).toMatchObject({ pass: false, counts: [['records', 2_000]], failures: ['no duplicates (seen: 3)', 'stopped by an error: boom'] });
    const table = renderTable([done]);
    expect(table).toContain('FAIL');
    expect(table).toContain('records 2,000');
    expect(table).toContain('✗ no duplicates (seen: 3)');
    expect(table).toContain('0 of 1 scenarios passed');
  });

  it('undoes in reverse order and goes on past a failing step', async () => {
    const cleanup = new CleanupStack();
    const order: string[] = [];
    cleanup.defer('first', () => void order.push('first'));
    cleanup.defer('second', () => {
      throw new Error('broken');
    });
    cleanup.defer('third', async () => void order.push('third'));
    expect(await cleanup.close()).toEqual(['clean-up "second" failed: broken']);
    expect(order).toEqual(['third', 'first']);
    expect(await cleanup.close()).toEqual([]);
  });
});
