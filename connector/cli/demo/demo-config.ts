/**
 * The config file `raretide demo` writes into its directory, as YAML text with comments, so a newcomer
 * can read what each section does and run the other commands on it. `config/examples/pump-station.yaml`
 * is this text for the default directory with the shipped schema (a test keeps the two equal).
 */
import { DEFAULT_FAULT_RATES } from './pump-station-telemetry.js';

export interface DemoTopics {
  /** Where the scenario's readings are produced to. */
  readonly source: string;
  readonly output: string;
  readonly deadLetter: string;
  readonly group: string;
}

export interface DemoConfigSettings {
  readonly brokers: string;
  readonly topics: DemoTopics;
  /** Path of the `.avsc` file, as commands will be given it (relative to their working directory). */
  readonly schemaFile: string;
  readonly modelDir: string;
  /** Seed of training and of sampling. */
  readonly seed: number;
  readonly epochs: number;
  readonly metricsPort: number;
}

/** Shares of the balanced stream per fault: each several times its rate in the raw readings. */
export const DEMO_TARGETS = { cavitation: 0.08, 'seal-leak': 0.05, 'dry-run': 0.04 } as const;
/** Enough variants per reading for the rarest fault (0.6 %) to reach its 4 % target. */
export const DEMO_MAX_PER_RECORD = 8;
/** A smaller network than the default 2×128: this schema has few fields, and the demo has little time. */
export const DEMO_HIDDEN = [64, 64] as const;

export function demoTopics(prefix: string): DemoTopics {
  return { source: `${prefix}.pump-telemetry`, output: `${prefix}.pump-telemetry.balanced`, deadLetter: `${prefix}.pump-telemetry.dead-letter`, group: prefix };
}

const percent = (share: number): string => `${Number((share * 100).toFixed(2))} %`;

export function renderDemoConfig(settings: DemoConfigSettings): string {
  const { topics } = settings;
  const rates = Object.entries(DEFAULT_FAULT_RATES)
    .map(([fault, rate]) => `${fault} ${percent(rate)}`)
    .join(', ');
  return `# raretide demo config — an INVENTED scenario, not real data: a water utility's 24 pump stations
# report one reading per pump a minute to \`${topics.source}\`.
# A few readings show a fault developing (${rates}); the rest are
# \`normal\`. A fault classifier trained downstream needs more examples of the faults.
# Written by \`raretide demo\`; the copy in config/examples/ points at the schema shipped beside it.
# Relative paths are read from the working directory, so run commands from where the demo ran (or,
# for the copy, from the repository root):
#   raretide check --config <this file>

# The cluster (\`raretide demo --kafka\` writes the broker it used). Credentials never go in this file:
# set them in the environment, e.g. RARETIDE__KAFKA__SETTINGS='{security.protocol: SASL_SSL, …}'.
kafka:
  brokers: ${settings.brokers}

# The labelled readings, raw Avro (no framing bytes) in the schema below. Replicas sharing \`group\`
# split the topic's partitions between them.
source:
  topic: ${topics.source}
  group: ${topics.group}
  framing:
    kind: raw
    schemaFile: ${settings.schemaFile}

# With originals included, the output topic is a balanced copy of the stream to train on. Readings that
# cannot be decoded or labelled go to the dead-letter topic with the reason in headers.
sink:
  topic: ${topics.output}
  includeOriginals: true
  deadLetterTopic: ${topics.deadLetter}

# The class of each reading is its \`condition\` field.
label:
  from: field
  path: condition

# Shares of the balanced stream to steer towards; \`normal\` is never oversampled.
# Up to ${DEMO_MAX_PER_RECORD} synthetic readings are made from one faulty reading.
balance:
  targets:
${Object.entries(DEMO_TARGETS)
  .map(([fault, target]) => `    ${fault}: ${target}`)
  .join('\n')}
  maxPerRecord: ${DEMO_MAX_PER_RECORD}
  seed: ${settings.seed}

# At most 500 synthetic readings a second (bursts of 1000); beyond that consumption waits, so every
# faulty reading is still served. \`raretide replay\` ignores it unless given --rate-cap.
rateCap:
  perSecond: 500
  burst: 1000
  whenExceeded: wait

# Written by \`raretide fit\`; a new model written here is picked up by a running worker.
model:
  dir: ${settings.modelDir}

# Identifiers are not learnt: each synthetic reading gets a fresh readingId and keeps the station of
# the reading it was made from (observedAt, a timestamp, is copied without being named here).
fields:
  readingId: fresh
  stationId: copy

# For \`raretide fit\`: a network of ${DEMO_HIDDEN.join('×')} (the default is 128×128), at most ${settings.epochs} passes.
training:
  hidden: [${DEMO_HIDDEN.join(', ')}]
  epochs: ${settings.epochs}
  seed: ${settings.seed}

# Prometheus metrics, /healthz and /readyz on loopback. 0 picks a free port (the worker logs it);
# give a fixed one, such as 9464, for a scrape config.
metrics:
  port: ${settings.metricsPort}

# Log lines for people; \`json\` suits a log collector.
log:
  format: text
`;
}
