/**
 * Scenario 7: security defaults and secret handling.
 *
 * 1. Bind address: a worker with no `metrics.host` listens on loopback only — read from the kernel's
 *    socket table, not from the worker's log.
 * 2. Client security settings: SASL/SSL properties written in a config file, the secrets filled from
 *    `RARETIDE__…` variables as config/README.md advises, reach the librdkafka properties of the
 *    consumer, producer and admin client unchanged, and librdkafka accepts every one of them (a client
 *    is constructed with them; node-rdkafka sets each property then). How `kafka.settings` maps to
 *    properties is unit-tested in test/unit/kafka/client-settings.test.ts; this adds the file and
 *    environment leg and librdkafka's own acceptance.
 * 3. Secrets never reach logs: a SASL password and an SSL key password (one in the file, one from the
 *    environment) must not appear in anything a worker prints or serves — while it works (debug log
 *    level, with dead letters on the way), while its authentication fails, and when a secret variable
 *    names an entry the file lacks (a config error).
 */
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';

import Kafka from 'node-rdkafka';

import { loadConfigFile } from '../../config/load.js';
import { requireSections } from '../../config/requirements.js';
import { adminSettings, groupConsumerSettings, producerSettings, transactionalIdFor } from '../../connector/kafka/client-settings.js';
import { sorterEvents, writeEvents } from '../support/run-worker-scenario.js';
import { waitFor } from '../support/wait-for.js';
import { CleanupStack } from './cleanup-stack.js';
import { patchRunConfig } from './config-patch.js';
import { runCliProcess } from './cli-process.js';
import { isLoopback, listeningSockets } from './listening-sockets.js';
import { RowRecorder, type ScenarioRow, type ScenarioSize } from './scenario-row.js';
import { createScenarioTopics } from './scenario-topics.js';
import { writeScenarioConfig, type SuiteContext } from './suite-context.js';
import { TopicProgress } from './topic-progress.js';
import { startWorkerProcess, type WorkerProcess } from './worker-process.js';

/** Made-up secrets, long and odd enough never to appear in a log by chance. */
const SASL_PASSWORD = 'Sasl-Pw-7f3b9c2e-in-file';
const SSL_KEY_PASSWORD = 'Ssl-Key-Pw-41d8e6a0-from-env';
const STRAY_SECRET = 'Stray-Pw-95c1ab37-unmatched-variable';
const SECRETS = [SASL_PASSWORD, SSL_KEY_PASSWORD, STRAY_SECRET];
const SSL_KEY_VARIABLE = 'RARETIDE__KAFKA__SETTINGS__SSL_KEY_PASSWORD';

export async function security(context: SuiteContext, size: ScenarioSize): Promise<ScenarioRow> {
  const row = new RowRecorder('7 security', 'metrics bind loopback by default; SASL/SSL settings file+env → librdkafka; secrets absent from every log line and endpoint, working or failing');
  const cleanup = new CleanupStack();
  try {
    await clientSettingsFromConfig(context, row);
    // The failing worker takes its connect timeout (30 s) to say anything: it runs beside the others.
    // Its failure is kept as a value until then, so it cannot go unhandled meanwhile.
    const failing = failingAuthentication(context, row, cleanup).then(
      () => undefined,
      (error: unknown) => error,
    );
    try {
      await workingWorker(context, size === 'full' ? 5_000 : 1_000, row, cleanup);
      await unmatchedSecretVariable(context, row);
    } finally {
      const failure = await failing;
      if (failure !== undefined) row.fail(failure);
    }
  } catch (error) {
    row.fail(error);
  } finally {
    for (const problem of await cleanup.close()) row.fail(problem);
  }
  return row.finish();
}

/** Part 2: file + environment → the three clients' librdkafka properties, accepted by librdkafka. */
async function clientSettingsFromConfig(context: SuiteContext, row: RowRecorder): Promise<void> {
  const path = join(context.dir, 'security-settings.yaml');
  await writeFile(
    path,
    [
      'kafka:',
      '  brokers: "127.0.0.1:9093"',
      '  settings:',
      '    security.protocol: SASL_SSL',
      '    sasl.mechanisms: SCRAM-SHA-512',
      '    sasl.username: raretide-worker',
      `    sasl.password: "${SASL_PASSWORD}"`,
      '    ssl.ca.location: /etc/raretide/ca.pem',
      '    ssl.certificate.location: /etc/raretide/client.pem',
      '    ssl.key.location: /etc/raretide/client.key',
      '    ssl.key.password: ""',
      '    ssl.endpoint.identification.algorithm: https',
      '',
    ].join('\n'),
  );
  const config = requireSections(await loadConfigFile(path, { env: { [SSL_KEY_VARIABLE]: SSL_KEY_PASSWORD } }), 'run', ['kafka']);
  const expected = {
    'bootstrap.servers': '127.0.0.1:9093',
    'security.protocol': 'SASL_SSL',
    'sasl.mechanisms': 'SCRAM-SHA-512',
    'sasl.username': 'raretide-worker',
    'sasl.password': SASL_PASSWORD,
    'ssl.ca.location': '/etc/raretide/ca.pem',
    'ssl.certificate.location': '/etc/raretide/client.pem',
    'ssl.key.location': '/etc/raretide/client.key',
    'ssl.key.password': SSL_KEY_PASSWORD,
    'ssl.endpoint.identification.algorithm': 'https',
  };
  const consumer = groupConsumerSettings(config.kafka, { group: 'security-check' });
  const clients = {
    consumer: consumer.global as Record<string, unknown>,
    producer: producerSettings(config.kafka, { group: 'security-check', guarantee: 'exactly-once', transactionalId: transactionalIdFor('security-check', 'pod-0') }) as Record<string, unknown>,
    admin: adminSettings(config.kafka) as Record<string, unknown>,
  };
  for (const [client, settings] of Object.entries(clients)) {
    const wrong = Object.entries(expected).filter(([key, value]) => settings[key] !== value).map(([key]) => key);
    row.check(`${client} gets every security property from file and environment`, wrong.length === 0, wrong.join(', '));
  }
  // Constructing a client hands each property to librdkafka, which refuses unknown names and values it
  // cannot honour (e.g. SASL_SSL in a build without SSL); nothing connects. The admin properties go to a
  // producer: AdminClient.create would connect at once.
  const accepted = (make: () => unknown) => {
    try {
      make();
      return 'accepted';
    } catch (error) {
      return (error as Error).message;
    }
  };
  const verdicts = [
    accepted(() => new Kafka.KafkaConsumer(consumer.global, consumer.topic)),
    accepted(() => new Kafka.Producer(clients.producer)),
    accepted(() => new Kafka.Producer(clients.admin)),
  ];
  row.check('librdkafka accepts the consumer, producer and admin properties', verdicts.every((verdict) => verdict === 'accepted'), verdicts.join(' | '));
  row.count('librdkafka features', ['ssl', 'sasl_plain', 'sasl_scram', 'sasl_oauthbearer'].filter((feature) => Kafka.features.includes(feature)).join(' '));
}

/** Parts 1 and 3 while the worker works: loopback bind, and no secret in logs or endpoints. */
async function workingWorker(context: SuiteContext, records: number, row: RowRecorder, cleanup: CleanupStack): Promise<void> {
  const { brokers } = context;
  const topics = await createScenarioTopics(brokers, 'rel-secret', 1, cleanup);
  const progress = await TopicProgress.open(brokers, cleanup);
  // Some undecodable payloads among them, so the dead-letter path logs and writes too.
  const events = sorterEvents(records, { jam: 0.05, misroute: 0.05 }, context.seed + 60).map((event, index) => (index % 50 === 7 ? undefined : event));
  await writeEvents(brokers, topics.source, events, 1);
  const configPath = await writeScenarioConfig(context, 'security-working', { topics, targets: { jam: 0.1 }, seed: context.seed });
  // The secrets ride along on a plaintext connection (librdkafka ignores SASL and SSL key settings
  // there), so this worker connects and works while holding them.
  await withSecrets(configPath, { 'security.protocol': 'plaintext' });
  const worker = startWorkerProcess({ configPath, instanceId: 'secret-0', env: { [SSL_KEY_VARIABLE]: SSL_KEY_PASSWORD }, logDir: context.logDir }, cleanup);
  const opsUrl = await worker.opsUrl();
  await waitFor(
    async () => {
      worker.requireRunning();
      return (await progress.committed(topics.group, topics.source, 1)) === records;
    },
    { what: 'the worker holding secrets to commit every record', timeoutMs: 120_000, intervalMs: 250 },
  );

  const port = Number(new URL(opsUrl).port);
  const listeners = (await listeningSockets()).filter((socket) => socket.port === port);
  row.count('metrics listeners', listeners.map((socket) => socket.address).join(' '));
  row.check('metrics listen on loopback only', listeners.length > 0 && listeners.every((socket) => isLoopback(socket.address)), listeners.map((socket) => socket.address).join(', ') || 'no listener');

  const served = await Promise.all(['/metrics', '/healthz', '/readyz'].map(async (path) => (await fetch(`${opsUrl}${path}`)).text()));
  const exit = await worker.stop('SIGTERM');
  row.check('the worker holding secrets exits 0 on SIGTERM', exit.code === 0, JSON.stringify(exit));
  row.check('the worker logged its client settings (redacted)', /"consumer settings"[^\n]*"sasl\.password":"\[redacted\]"/.test(worker.stderr()));
  checkNoSecrets('working worker', [worker.stderr(), worker.stdout(), ...served], row);
  row.count('log lines checked', worker.logLines().length);
}

/** Part 3 while authentication fails: SASL against a plaintext listener. */
async function failingAuthentication(context: SuiteContext, row: RowRecorder, cleanup: CleanupStack): Promise<void> {
  const topics = await createScenarioTopics(context.brokers, 'rel-secret-fail', 1, cleanup);
  const configPath = await writeScenarioConfig(context, 'security-failing', { topics, targets: { jam: 0.1 } });
  await withSecrets(configPath, { 'security.protocol': 'SASL_PLAINTEXT', 'sasl.mechanisms': 'PLAIN' });
  const worker = startWorkerProcess({ configPath, instanceId: 'secret-1', env: { [SSL_KEY_VARIABLE]: SSL_KEY_PASSWORD }, logDir: context.logDir }, cleanup);
  await waitFor(() => !worker.running() || worker.logLines().some((line) => line.level === 'warn' || line.level === 'error'), {
    what: 'the worker to report its failing connection',
    timeoutMs: 90_000,
    intervalMs: 200,
  });
  await stopWithin(worker, 30_000);
  const failures = worker.logLines().filter((line) => line.level === 'warn' || line.level === 'error');
  row.count('failing-auth warnings', failures.length);
  checkNoSecrets('worker failing to authenticate', [worker.stderr(), worker.stdout()], row);
}

/** Part 3 for a config error: a secret variable naming an entry the file does not have. */
async function unmatchedSecretVariable(context: SuiteContext, row: RowRecorder): Promise<void> {
  const configPath = join(context.dir, 'security-unmatched.yaml');
  await writeFile(configPath, [`kafka: {brokers: "${context.brokers}", settings: {security.protocol: SASL_SSL}}`, ''].join('\n'));
  const run = await runCliProcess(['check', '--config', configPath], { env: { RARETIDE__KAFKA__SETTINGS__SASL_PASSWORD: STRAY_SECRET } });
  row.check('a secret variable the file does not name is refused (exit 2)', run.code === 2, `exit ${run.code}`);
  checkNoSecrets('config error of an unmatched secret variable', [run.stderr, run.stdout], row);
}

/** SASL/SSL settings with the secrets for a run config: the SASL password in the file, the SSL key's from the environment. */
function withSecrets(configPath: string, protocol: Record<string, string>): Promise<void> {
  return patchRunConfig(configPath, {
    kafkaSettings: { ...protocol, 'sasl.username': 'raretide-worker', 'sasl.password': SASL_PASSWORD, 'ssl.key.password': '' },
    logLevel: 'debug',
  });
}

function checkNoSecrets(where: string, texts: readonly string[], row: RowRecorder): void {
  const all = texts.join('\n');
  const found = SECRETS.filter((secret) => all.includes(secret));
  const line = all.split('\n').find((text) => found.some((secret) => text.includes(secret)));
  row.check(`${where}: no secret in its output`, found.length === 0, `${found.length} found, e.g. ${line?.slice(0, 200)}`);
}

/** SIGTERM, and SIGKILL if it has not exited within `graceMs`. */
async function stopWithin(worker: WorkerProcess, graceMs: number): Promise<void> {
  if (!worker.running()) return;
  worker.child.kill('SIGTERM');
  const killer = setTimeout(() => worker.child.kill('SIGKILL'), graceMs);
  try {
    await worker.exited;
  } finally {
    clearTimeout(killer);
  }
}
