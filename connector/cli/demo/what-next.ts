/** The demo's closing lines: what to look at, and the commands that take the worker to a real cluster. */
import type { DemoPaths } from './demo-directory.js';

export interface WhatNextOptions {
  readonly paths: DemoPaths;
  /** Set when the run was `--kafka`: the brokers it used, and whether the demo started (and stopped) them. */
  readonly kafka?: { readonly brokers: string; readonly startedByDemo: boolean };
}

export function whatNext({ paths, kafka }: WhatNextOptions): string[] {
  const lines = ['What next'];
  if (kafka === undefined) {
    lines.push(
      `  open ${paths.reportHtml} in a browser: the whole report, with plots`,
      '  the live worker on a Kafka cluster, fed by a producer of these readings (without KAFKA_BROKERS the demo',
      '  starts a local broker, which needs Java 17 and Maven):',
      '    KAFKA_BROKERS=host:port npx raretide demo --kafka',
    );
  } else if (kafka.startedByDemo) {
    lines.push(`  the broker the demo started is stopped and removed; \`npm run kafka:up\` starts one that stays up, then`, `  set kafka.brokers in ${paths.config} to the address it prints.`);
  } else {
    lines.push(`  the worker alone, on ${kafka.brokers}, from where this one stopped (its offsets and counts are kept):`, `    npx raretide run --config ${paths.config}`);
  }
  lines.push(
    `  the worker on your own stream: copy ${paths.config}, set kafka, source, sink, label, balance and fields`,
    '  for your topic and schema, then',
    '    npx raretide check --config my-stream.yaml',
    '    npx raretide inspect --config my-stream.yaml',
    '    npx raretide fit --config my-stream.yaml',
    '    npx raretide run --config my-stream.yaml',
    `${paths.dir} holds only invented data and the demo's model; delete it when done.`,
  );
  return lines;
}
