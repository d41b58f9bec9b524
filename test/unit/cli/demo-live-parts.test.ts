/** The parts of `raretide demo --kafka` that need no broker: the live line, its display, the closing lines. */
import { describe, expect, it } from 'vitest';

import { demoPaths } from '../../../connector/cli/demo/demo-directory.js';
import { classTotals, LiveDisplay, liveLine } from '../../../connector/cli/demo/live-counts.js';
import { whatNext } from '../../../connector/cli/demo/what-next.js';
import { emptyTally, type ClassTally } from '../../../connector/pipeline/accounting.js';

const ERASE_LINE = '\r\u001b[2K';

function tallies(entries: Record<string, Partial<ClassTally>>): Map<string, ClassTally> {
  return new Map(Object.entries(entries).map(([label, tally]) => [label, { ...emptyTally(), ...tally }]));
}

describe('the live line', () => {
  it('gives each target class its share of originals + synthetic, against its target', () => {
    // 900 normal + (60 + 40) cavitation = 1000 in the stream: cavitation is 10 %.
    const byClass = tallies({ normal: { consumed: 900 }, cavitation: { consumed: 60, synthetic: 40 } });
    const line = liveLine({ elapsedMs: 12_000, produced: 1_000, consumed: 960, byClass, targets: { cavitation: 0.08, 'dry-run': 0.04 } });
    expect(line).toBe('live 12.0 s: produced 1,000, consumed 960, synthetic 40; share (target): cavitation 10.0 % (8.00 %), dry-run 0.00 % (4.00 %)');
  });

  it('is all zeros before anything was consumed', () => {
    expect(liveLine({ elapsedMs: 0, produced: 0, consumed: 0, byClass: new Map(), targets: { cavitation: 0.08 } })).toContain('cavitation 0.00 % (8.00 %)');
  });

  it('lists class totals, the most common class first', () => {
    expect(classTotals(tallies({ 'dry-run': { consumed: 3, synthetic: 20 }, normal: { consumed: 1_200 } }))).toBe('normal 1,200, dry-run 3 + 20 synthetic');
  });
});

describe('the live display', () => {
  it('writes a line each time when standard error is not a terminal', () => {
    let written = '';
    const display = new LiveDisplay((text) => (written += text), undefined, false);
    display.show('one');
    display.passThrough('log line\n');
    display.show('two');
    display.finish();
    expect(written).toBe('one\nlog line\ntwo\n');
  });

  it('redraws one line on a terminal, cut to its width, and clears it before other text', () => {
    let written = '';
    const display = new LiveDisplay((text) => (written += text), 8, false);
    display.show('live 1 abcdef');
    display.passThrough('log\n');
    display.show('live 2');
    display.finish();
    expect(written).toBe(`${ERASE_LINE}live 1 ${ERASE_LINE}log\n${ERASE_LINE}live 2\n`);
  });

  it('shows nothing when quiet, yet passes other text through', () => {
    let written = '';
    const display = new LiveDisplay((text) => (written += text), 80, true);
    display.show('live');
    display.passThrough('error line\n');
    display.finish();
    expect(written).toBe('error line\n');
  });
});

describe('what next', () => {
  const paths = demoPaths('raretide-demo');

  it('after the file demo: the report, the live demo, and the commands for one\'s own stream', () => {
    const text = whatNext({ paths }).join('\n');
    expect(text).toContain('open raretide-demo/report.html');
    expect(text).toContain('KAFKA_BROKERS=host:port npx raretide demo --kafka');
    expect(text).toContain('npx raretide run --config my-stream.yaml');
    expect(text).toMatch(/raretide-demo holds only invented data .*delete it when done\.$/);
  });

  it('after a live run on a given cluster: the same worker without the demo', () => {
    const text = whatNext({ paths, kafka: { brokers: 'kafka-1:9092', startedByDemo: false } }).join('\n');
    expect(text).toContain('on kafka-1:9092');
    expect(text).toContain('npx raretide run --config raretide-demo/pump-station.yaml');
  });

  it('after a live run on a broker the demo started: that it is gone, and how to keep one', () => {
    const text = whatNext({ paths, kafka: { brokers: '127.0.0.1:40000', startedByDemo: true } }).join('\n');
    expect(text).toContain('stopped and removed');
    expect(text).toContain('npm run kafka:up');
  });
});
