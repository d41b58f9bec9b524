/**
 * Static checks of deploy/k8s and deploy/systemd: no cluster and no systemd run here, so these read
 * the files and hold them against the code they deploy — the config loader, the worker's stop
 * deadline, the metrics port, the CLI's exit codes and the image's user.
 */
import { readdir, readFile } from 'node:fs/promises';
import { basename, join, posix } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseAllDocuments } from 'yaml';
import { EXIT_USAGE } from '../../../connector/cli/program.js';
import { loadConfigFile } from '../../../config/load.js';
import { requireSections } from '../../../config/requirements.js';
import { STOP_DEADLINE_MS } from '../../../connector/cli/commands/run.js';
import { WORKER_NODE_OPTIONS } from '../../../connector/cli/run/node-options.js';

const K8S = 'deploy/k8s';

type Manifest = Record<string, any>;

async function manifest(file: string): Promise<Manifest> {
  const documents = parseAllDocuments(await readFile(join(K8S, file), 'utf8'));
  if (!Array.isArray(documents) || documents.length !== 1) throw new Error(`${file}: expected one YAML document`);
  const [document] = documents;
  expect(document!.errors, file).toEqual([]);
  return document!.toJS() as Manifest;
}

/** Kubernetes quantities in bytes: binary (Ki, Mi, Gi) and decimal (k, M, G) suffixes (Kubernetes API, "Quantity"). */
function bytes(quantity: string): number {
  const match = /^(\d+(?:\.\d+)?)(Ki|Mi|Gi|k|M|G)?$/.exec(quantity);
  if (match === null) throw new Error(`not a memory quantity: ${quantity}`);
  const unit = { Ki: 2 ** 10, Mi: 2 ** 20, Gi: 2 ** 30, k: 1e3, M: 1e6, G: 1e9 }[match[2] ?? ''] ?? 1;
  return Number(match[1]) * unit;
}

/** CPU quantities in cores: `500m` or `2`. */
function cores(quantity: string | number): number {
  const text = String(quantity);
  return text.endsWith('m') ? Number(text.slice(0, -1)) / 1000 : Number(text);
}

function matches(selector: Record<string, string>, labels: Record<string, string>): boolean {
  return Object.entries(selector).every(([key, value]) => labels[key] === value);
}

const kustomization = await manifest('kustomization.yaml');
const deployment = await manifest('deployment.yaml');
const pod = deployment.spec.template.spec;
const container = pod.containers[0];
const podLabels = deployment.spec.template.metadata.labels as Record<string, string>;
const generatedConfig = kustomization.configMapGenerator[0] as { name: string; files: string[] };
const configFile = generatedConfig.files.find((file) => file.endsWith('.yaml'))!;
const config = await loadConfigFile(join(K8S, configFile));
const mountOf = (volume: string) => container.volumeMounts.find((mount: Manifest) => mount.name === volume);
const volumeOf = (name: string) => pod.volumes.find((volume: Manifest) => volume.name === name);

describe('deploy/k8s: the kustomization', () => {
  it('lists every manifest in the directory and generates the ConfigMap from files that exist', async () => {
    const manifests = (await readdir(K8S)).filter((file) => file.endsWith('.yaml') && file !== 'kustomization.yaml');
    expect([...kustomization.resources].sort()).toEqual(manifests.sort());
    const kinds = await Promise.all(manifests.map(async (file) => (await manifest(file)).kind));
    expect(kinds.sort()).toEqual(['Deployment', 'PersistentVolumeClaim', 'PodDisruptionBudget', 'Service']);
    for (const file of generatedConfig.files) await expect(readFile(join(K8S, file))).resolves.toBeDefined();
  });
});

describe('deploy/k8s: the worker config in the ConfigMap', () => {
  it('validates with raretide\'s own loader and has every section `run` needs', () => {
    expect(() => requireSections(config, 'run', ['kafka', 'source', 'sink', 'label', 'balance', 'model'])).not.toThrow();
  });

  it('opens metrics to the probes and matches the container port, the probes and the Service', async () => {
    expect(config.metrics).toMatchObject({ enabled: true, host: '0.0.0.0' });
    const port = container.ports.find((entry: Manifest) => entry.name === 'metrics');
    expect(port.containerPort).toBe(config.metrics.port);
    expect(container.livenessProbe.httpGet).toEqual({ path: '/healthz', port: 'metrics' });
    expect(container.readinessProbe.httpGet).toEqual({ path: '/readyz', port: 'metrics' });
    const service = await manifest('service.yaml');
    expect(service.spec.ports).toEqual([{ name: 'metrics', port: config.metrics.port, targetPort: 'metrics', protocol: 'TCP' }]);
    expect(service.metadata.annotations).toEqual({ 'prometheus.io/scrape': 'true', 'prometheus.io/port': String(config.metrics.port), 'prometheus.io/path': '/metrics' });
  });

  it('is read where the container looks: the ConfigMap mount, with its schema files beside it', () => {
    expect(volumeOf('config').configMap.name).toBe(generatedConfig.name);
    const mount = mountOf('config');
    expect(mount.readOnly).toBe(true);
    const configIndex = container.args.indexOf('--config');
    expect(container.args[configIndex + 1]).toBe(posix.join(mount.mountPath, basename(configFile)));
    const framing = config.source!.framing;
    const schemaFiles = framing.kind === 'raw' ? [framing.schemaFile] : framing.kind === 'single-object' ? framing.schemaFiles : [];
    expect(schemaFiles.length).toBeGreaterThan(0);
    const generatedNames = generatedConfig.files.map((file) => basename(file));
    for (const file of schemaFiles) {
      expect(posix.dirname(file)).toBe(mount.mountPath);
      expect(generatedNames).toContain(basename(file));
    }
  });

  it('is the payments example with the paths of the pod', async () => {
    const example = await loadConfigFile('config/examples/payments.yaml');
    const podSpecific = (loaded: typeof config) => ({ ...loaded, kafka: undefined, source: { ...loaded.source, framing: undefined }, model: { ...loaded.model, dir: undefined }, metrics: { ...loaded.metrics, host: undefined } });
    expect(podSpecific(config)).toEqual(podSpecific(example));
    expect(await readFile(join(K8S, 'config/card-payment.avsc'), 'utf8')).toBe(await readFile('config/examples/schemas/card-payment.avsc', 'utf8'));
  });

  it('keeps model.dir inside the read-only models volume, one level down: fit renames a new model into place beside it', async () => {
    const mount = mountOf('models');
    expect(mount.readOnly).toBe(true);
    expect(posix.dirname(config.model!.dir)).toBe(mount.mountPath);
    const claim = await manifest('model-volume.yaml');
    expect(volumeOf('models').persistentVolumeClaim).toEqual({ claimName: claim.metadata.name, readOnly: true });
  });
});

describe('deploy/k8s: the Deployment', () => {
  it('names each replica by its pod, so each has its own transactional id', () => {
    expect(container.args.slice(0, 1)).toEqual(['run']);
    expect(container.args[container.args.indexOf('--instance-id') + 1]).toBe('$(POD_NAME)');
    expect(container.env).toContainEqual({ name: 'POD_NAME', valueFrom: { fieldRef: { fieldPath: 'metadata.name' } } });
  });

  it('gives the worker longer to stop than its own stop deadline', async () => {
    expect(pod.terminationGracePeriodSeconds * 1000).toBeGreaterThan(STOP_DEADLINE_MS);
  });

  it('runs as the image\'s non-root user, read-only, without privilege escalation or capabilities', async () => {
    expect(pod.securityContext).toMatchObject({ runAsNonRoot: true, seccompProfile: { type: 'RuntimeDefault' } });
    const containerfile = await readFile('deploy/container/Containerfile', 'utf8');
    const imageUser = /^USER (\d+):(\d+)$/m.exec(containerfile);
    expect(imageUser).not.toBeNull();
    expect(pod.securityContext.runAsUser).toBe(Number(imageUser![1]));
    expect(pod.securityContext.runAsGroup).toBe(Number(imageUser![2]));
    expect(pod.securityContext.runAsUser).toBeGreaterThan(0);
    expect(container.securityContext).toEqual({ allowPrivilegeEscalation: false, readOnlyRootFilesystem: true, capabilities: { drop: ['ALL'] } });
    // Writable mounts are scratch space only.
    for (const mount of container.volumeMounts) {
      if (mount.readOnly !== true) expect(volumeOf(mount.name).emptyDir, mount.name).toBeDefined();
    }
  });

  it('requests and limits CPU and memory above the worker\'s measured RSS', () => {
    // Measured RSS 300–440 MiB catching up on a 300,000-record backlog with a model of the default
    // layer sizes and the deployed Node options (README, `npm run bench:worker`).
    const measuredPeak = 440 * 2 ** 20;
    const { requests, limits } = container.resources;
    expect(bytes(requests.memory)).toBeGreaterThan(measuredPeak);
    expect(bytes(limits.memory)).toBeGreaterThanOrEqual(bytes(requests.memory));
    expect(cores(requests.cpu)).toBeGreaterThan(0);
    expect(cores(limits.cpu)).toBeGreaterThanOrEqual(cores(requests.cpu));
  });

  it('is selected by its own selector, the Service and the PodDisruptionBudget', async () => {
    expect(matches(deployment.spec.selector.matchLabels, podLabels)).toBe(true);
    const service = await manifest('service.yaml');
    expect(matches(service.spec.selector, podLabels)).toBe(true);
    const budget = await manifest('pod-disruption-budget.yaml');
    expect(budget.spec.selector.matchLabels).toEqual(deployment.spec.selector.matchLabels);
    expect(budget.spec.maxUnavailable).toBe(1);
  });

  it('rolls without a surge pod, so the group never has more members than replicas', () => {
    expect(deployment.spec.strategy).toEqual({ type: 'RollingUpdate', rollingUpdate: { maxSurge: 0, maxUnavailable: 1 } });
  });
});

/** systemd unit files: `[Section]` headers and `Key=value` lines; `#` and `;` start comments (systemd.syntax(7)). */
function parseUnit(text: string): Map<string, Map<string, string[]>> {
  const sections = new Map<string, Map<string, string[]>>();
  let current: Map<string, string[]> | undefined;
  for (const [index, raw] of text.split('\n').entries()) {
    const line = raw.trim();
    if (line === '' || line.startsWith('#') || line.startsWith(';')) continue;
    if (line.endsWith('\\')) throw new Error(`line ${index + 1}: continuation lines are not expected here`);
    const header = /^\[(\w+)\]$/.exec(line);
    if (header !== null) {
      current = new Map();
      sections.set(header[1]!, current);
      continue;
    }
    const separator = line.indexOf('=');
    if (current === undefined || separator < 1) throw new Error(`line ${index + 1}: expected Key=value inside a section: ${line}`);
    const key = line.slice(0, separator);
    current.set(key, [...(current.get(key) ?? []), line.slice(separator + 1)]);
  }
  return sections;
}

/** systemd time spans as used here: a number with s, min or no unit (seconds), systemd.time(7). */
function seconds(span: string): number {
  const match = /^(\d+)(s|min)?$/.exec(span);
  if (match === null) throw new Error(`unexpected time span ${span}`);
  return Number(match[1]) * (match[2] === 'min' ? 60 : 1);
}

const unit = parseUnit(await readFile('deploy/systemd/raretide.service', 'utf8'));

describe('deploy/systemd/raretide.service', () => {
  const service = unit.get('Service')!;
  const one = (key: string): string | undefined => {
    const values = service.get(key);
    expect(values?.length ?? 1, key).toBeLessThanOrEqual(1);
    return values?.[0];
  };

  it('has the Unit, Service and Install sections', () => {
    expect([...unit.keys()]).toEqual(['Unit', 'Service', 'Install']);
    expect(unit.get('Install')!.get('WantedBy')).toEqual(['multi-user.target']);
  });

  it('runs the package\'s CLI entry point as `run --config`, as a simple service of its own user', async () => {
    const { bin } = JSON.parse(await readFile('package.json', 'utf8')) as { bin: Record<string, string> };
    expect(one('ExecStart')).toMatch(new RegExp(`^/\\S*node ${WORKER_NODE_OPTIONS.join(' ')} /opt/raretide/${bin.raretide!.replaceAll('.', '\\.')} run --config /etc/raretide/raretide\\.yaml$`));
    // raretide never calls sd_notify, so Type=notify would never see the service start.
    expect(one('Type')).toBe('simple');
    expect(one('User')).toMatch(/^(?!root$)\w+$/);
    expect(one('Group')).toMatch(/^(?!root$)\w+$/);
    expect(one('EnvironmentFile')).toMatch(/^-?\/etc\/raretide\/\S+\.env$/);
  });

  it('restarts on failure but not after a config error, and stops with SIGTERM after the worker\'s deadline', async () => {
    expect(one('Restart')).toBe('on-failure');
    expect(one('RestartPreventExitStatus')!.split(/\s+/)).toContain(String(EXIT_USAGE));
    expect(one('KillSignal')).toBe('SIGTERM');
    expect(seconds(one('TimeoutStopSec')!) * 1000).toBeGreaterThan(STOP_DEADLINE_MS);
  });

  it('is hardened: no new privileges, a read-only system but for its state directory, a private /tmp', () => {
    expect(one('NoNewPrivileges')).toBe('yes');
    expect(one('ProtectSystem')).toBe('strict');
    expect(one('PrivateTmp')).toBe('yes');
    expect(one('ReadWritePaths')!.split(/\s+/)).toContain(`/var/lib/${one('StateDirectory')}`);
    expect(one('CapabilityBoundingSet')).toBe('');
    // V8's JIT and WebAssembly write code into memory and run it.
    expect(one('MemoryDenyWriteExecute')).toBeUndefined();
  });
});
