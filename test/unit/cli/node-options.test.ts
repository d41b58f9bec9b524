import { spawnSync } from 'node:child_process';

import { describe, expect, it } from 'vitest';

import { missingNodeOptions, WORKER_NODE_OPTIONS } from '../../../connector/cli/run/node-options.js';

describe('missingNodeOptions', () => {
  it('names the worker options a bare `node` was started without', () => {
    expect(missingNodeOptions([], undefined)).toEqual([...WORKER_NODE_OPTIONS]);
    expect(missingNodeOptions(['--import', 'tsx'], '--enable-source-maps')).toEqual([...WORKER_NODE_OPTIONS]);
  });

  it('finds them on the command line or in NODE_OPTIONS, by name whatever the value, in either V8 spelling', () => {
    expect(missingNodeOptions(['--max-semi-space-size=64'], undefined)).toEqual([]);
    expect(missingNodeOptions([], ' --enable-source-maps  --max-semi-space-size=32 ')).toEqual([]);
    expect(missingNodeOptions(['--max_semi_space_size=128'], undefined)).toEqual([]);
  });

  it('are options this node accepts (it refuses an unknown one at start-up)', () => {
    // Node itself as the reference: an option it does not know exits with "bad option".
    const run = spawnSync(process.execPath, [...WORKER_NODE_OPTIONS, '-e', 'process.exit(0)'], { encoding: 'utf8' });
    expect(run.stderr).toBe('');
    expect(run.status).toBe(0);
  });
});
