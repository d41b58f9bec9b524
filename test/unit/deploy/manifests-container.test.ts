/**
 * Static checks of deploy/container/Containerfile and .dockerignore: no image is built here, so these
 * parse the instructions and hold them against package.json, the build's tsconfig and the config
 * schema's metrics port.
 */
import { readFile } from 'node:fs/promises';
import { describe, expect, it } from 'vitest';
import { validateConfig } from '../../../config/load.js';
import { WORKER_NODE_OPTIONS } from '../../../connector/cli/run/node-options.js';

interface Instruction {
  readonly keyword: string;
  readonly argument: string;
}

interface Stage {
  readonly image: string;
  readonly name: string | undefined;
  readonly instructions: readonly Instruction[];
}

/**
 * Dockerfile syntax as the Dockerfile reference describes it: `#` comment lines, a trailing `\` joins
 * the next line, then `KEYWORD argument`. Parser directives and heredocs are not used here.
 */
function parseContainerfile(text: string): { readonly args: readonly Instruction[]; readonly stages: readonly Stage[] } {
  const logical: string[] = [];
  let pending = '';
  for (const raw of text.split('\n')) {
    if (/^\s*#/.test(raw)) continue;
    const line = raw.trimEnd();
    if (line.endsWith('\\')) {
      pending += `${line.slice(0, -1)} `;
      continue;
    }
    const joined = (pending + line).trim();
    pending = '';
    if (joined !== '') logical.push(joined.replace(/\s+/g, ' '));
  }
  const args: Instruction[] = [];
  const stages: { image: string; name: string | undefined; instructions: Instruction[] }[] = [];
  for (const line of logical) {
    const space = line.indexOf(' ');
    const instruction = { keyword: line.slice(0, space).toUpperCase(), argument: line.slice(space + 1) };
    if (instruction.keyword === 'FROM') {
      const [image, as, name] = instruction.argument.split(' ');
      stages.push({ image: image!, name: as?.toUpperCase() === 'AS' ? name : undefined, instructions: [] });
    } else if (stages.length === 0) {
      args.push(instruction);
    } else {
      stages.at(-1)!.instructions.push(instruction);
    }
  }
  return { args, stages };
}

const all = (stage: Stage, keyword: string): string[] => stage.instructions.filter((entry) => entry.keyword === keyword).map((entry) => entry.argument);
const last = (stage: Stage, keyword: string): string | undefined => all(stage, keyword).at(-1);

const containerfile = parseContainerfile(await readFile('deploy/container/Containerfile', 'utf8'));
const build = containerfile.stages[0]!;
const runtime = containerfile.stages.at(-1)!;
const packageJson = JSON.parse(await readFile('package.json', 'utf8')) as { bin: Record<string, string>; optionalDependencies?: Record<string, string> };

describe('deploy/container/Containerfile', () => {
  it('has a build stage and a separate runtime stage', () => {
    expect(containerfile.stages.length).toBeGreaterThanOrEqual(2);
    expect(build.name).toBe('build');
    expect(runtime.name).toBe('runtime');
  });

  it('builds in the build stage: toolchain for node-rdkafka, npm ci, the TypeScript build, then dev packages pruned', () => {
    const runs = all(build, 'RUN').join('\n');
    for (const tool of ['g++', 'make', 'python3']) expect(runs).toContain(` ${tool} `);
    expect(runs).toMatch(/\bnpm ci\b/);
    expect(runs).toMatch(/\bnpm rebuild node-rdkafka\b/);
    expect(runs).toMatch(/\bnpm run build\b/);
    expect(runs).toMatch(/\bnpm prune --omit=dev\b/);
  });

  it('omits the optional tfjs-node, and it is the only optional dependency that flag drops', () => {
    expect(all(build, 'RUN').join('\n')).toMatch(/\bnpm ci --omit=optional\b/);
    expect(Object.keys(packageJson.optionalDependencies ?? {})).toEqual(['@tensorflow/tfjs-node']);
  });

  it('copies every source directory the build compiles', async () => {
    const buildConfig = JSON.parse(await readFile('tsconfig.build.json', 'utf8')) as { include: string[] };
    const copied = all(build, 'COPY').flatMap((argument) => argument.split(' ').slice(0, -1));
    for (const directory of buildConfig.include) expect(copied).toContain(directory);
  });

  it('ships only the built program, its runtime packages, the examples and package.json, with no toolchain', () => {
    const sources = all(runtime, 'COPY').map((argument) => {
      const [from, source] = argument.split(' ');
      expect(from).toBe(`--from=${build.name}`);
      return source;
    });
    expect(sources.sort()).toEqual(['/build/config/examples', '/build/dist', '/build/node_modules', '/build/package.json']);
    const runs = all(runtime, 'RUN').join('\n');
    expect(runs).not.toMatch(/\b(npm|g\+\+|make|python3)\b/);
  });

  it('runs as a numeric non-root user', () => {
    const user = last(runtime, 'USER');
    expect(user).toMatch(/^\d+:\d+$/);
    expect(Number(user!.split(':')[0])).toBeGreaterThan(0);
    expect(Number(user!.split(':')[1])).toBeGreaterThan(0);
  });

  it('starts the package\'s CLI entry point with the worker\'s Node options, `run` with the mounted config by default', () => {
    expect(JSON.parse(last(runtime, 'ENTRYPOINT')!)).toEqual(['node', ...WORKER_NODE_OPTIONS, packageJson.bin.raretide]);
    expect(JSON.parse(last(runtime, 'CMD')!)).toEqual(['run', '--config', '/etc/raretide/raretide.yaml']);
    expect(last(runtime, 'STOPSIGNAL')).toBe('SIGTERM');
  });

  it('exposes the default metrics port of the config schema', () => {
    expect(last(runtime, 'EXPOSE')).toBe(String(validateConfig({}).metrics.port));
  });

  it('relies on the orchestrator\'s probes, and carries no secrets', () => {
    expect(all(runtime, 'HEALTHCHECK')).toEqual([]);
    const variables = [...containerfile.args, ...containerfile.stages.flatMap((stage) => stage.instructions)]
      .filter((entry) => entry.keyword === 'ENV' || entry.keyword === 'ARG')
      .map((entry) => entry.argument.split(/[= ]/)[0]!);
    for (const name of variables) expect(name).not.toMatch(/password|secret|token|credential|key/i);
  });
});

describe('.dockerignore', () => {
  it('allows only what the build stage copies from the context', async () => {
    const rules = (await readFile('.dockerignore', 'utf8'))
      .split('\n')
      .map((line) => line.trim())
      .filter((line) => line !== '' && !line.startsWith('#'));
    expect(rules[0]).toBe('*');
    const allowed = rules.slice(1).map((rule) => {
      expect(rule.startsWith('!')).toBe(true);
      return rule.slice(1).replace(/\/$/, '');
    });
    const copied = all(build, 'COPY')
      .filter((argument) => !argument.startsWith('--from='))
      .flatMap((argument) => argument.split(' ').slice(0, -1));
    expect([...allowed].sort()).toEqual([...new Set(copied)].sort());
  });
});
