import { spawn, spawnSync } from 'node:child_process';

/**
 * Debian's `kcat` (librdkafka's C command-line client) as the reference pass-through:
 * `kcat -C` in a consumer group prints key and value with delimiters, `kcat -P` splits them
 * and produces. Avro values are binary, so the delimiters are multi-byte strings that cannot
 * occur in our records' text fields; the caller checks the record count afterwards anyway.
 */
const KEY_DELIMITER = '~RTK~';
const MESSAGE_DELIMITER = '~RTM~';

/** e.g. `kcat 1.7.1, librdkafka 2.0.2`, or undefined when kcat is not installed. */
export function kcatVersion(): string | undefined {
  const result = spawnSync('kcat', ['-V'], { encoding: 'utf8' });
  if (result.error || result.status !== 0) return undefined;
  const match = /Version (\S+).*librdkafka (\S+)/.exec(result.stdout);
  return match ? `kcat ${match[1]}, librdkafka ${match[2]}` : 'kcat (version unknown)';
}

export interface KcatPipeInput {
  brokers: string;
  sourceTopic: string;
  sinkTopic: string;
  groupId: string;
}

/**
 * Runs `kcat -C … | kcat -P …` through bash (pipefail, so a failure on either side counts)
 * and resolves with the wall-clock milliseconds from launch to both ends exiting. The
 * consumer stops at the end of every assigned partition (-e); the producer flushes on EOF.
 */
export function runKcatPipe({ brokers, sourceTopic, sinkTopic, groupId }: KcatPipeInput): Promise<number> {
  const quote = (text: string) => `'${text.replace(/'/g, `'\\''`)}'`;
  const consume = ['kcat', '-q', '-b', brokers, '-G', groupId, '-X', 'auto.offset.reset=earliest', '-e',
    '-f', `%k${KEY_DELIMITER}%s${MESSAGE_DELIMITER}`, sourceTopic].map(quote).join(' ');
  const produce = ['kcat', '-q', '-P', '-b', brokers, '-t', sinkTopic, '-K', KEY_DELIMITER, '-D', MESSAGE_DELIMITER].map(quote).join(' ');
  const started = Date.now();
  return new Promise((resolve, reject) => {
    const child = spawn('bash', ['-c', `set -o pipefail; ${consume} | ${produce}`], { stdio: ['ignore', 'inherit', 'pipe'] });
    let stderr = '';
    child.stderr.on('data', (chunk: Buffer) => { stderr += chunk.toString(); });
    child.on('error', reject);
    child.on('exit', (code) => {
      if (code === 0) resolve(Date.now() - started);
      else reject(new Error(`kcat pipe exited with ${code}: ${stderr.slice(-2000)}`));
    });
  });
}
