import { request } from 'node:http';
import { connect } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { RaretideError } from '../../../config/errors.js';
import { exposureWarning, isLoopbackHost, startOpsServer, type OpsServer } from '../../../connector/ops/http-server.js';
import { createLogger } from '../../../connector/ops/logger.js';
import { Heartbeat, ReadinessGate } from '../../../connector/ops/probes.js';
import { WorkerMetrics } from '../../../connector/ops/worker-metrics.js';

const clock = { time: 1_000_000, now: () => clock.time };
const heartbeat = new Heartbeat(10_000, clock);
const readiness = new ReadinessGate(['consumer assigned', 'model loaded']);
const metrics = new WorkerMetrics();
const logLines: string[] = [];
let server: OpsServer;

/** A plain request on a fresh connection, so any method can be sent. */
function call(method: string, path: string): Promise<{ status: number; headers: Record<string, string | string[] | undefined>; body: string }> {
  return new Promise((resolve, reject) => {
    const outgoing = request({ host: '127.0.0.1', port: server.port, method, path, agent: false }, (response) => {
      let body = '';
      response.setEncoding('utf8');
      response.on('data', (chunk: string) => (body += chunk));
      response.on('end', () => resolve({ status: response.statusCode ?? 0, headers: response.headers, body }));
    });
    outgoing.on('error', reject);
    outgoing.end();
  });
}

beforeAll(async () => {
  server = await startOpsServer({
    host: '127.0.0.1',
    port: 0,
    metrics: () => metrics.registry.render(),
    liveness: () => heartbeat.status(),
    readiness: () => readiness.status(),
    log: createLogger({ sink: (line) => logLines.push(line) }),
  });
});

afterAll(async () => {
  await server.close();
});

describe('ops HTTP server', () => {
  it('binds 127.0.0.1 on a free port when asked for port 0 and says where', () => {
    expect(server.port).toBeGreaterThan(0);
    expect(server.url).toBe(`http://127.0.0.1:${server.port}`);
    expect(logLines.join('')).toContain(`serving /metrics, /healthz and /readyz on http://127.0.0.1:${server.port}`);
    expect(logLines.join('')).not.toContain('not a loopback address');
  });

  it('serves the exposition as text/plain version 0.0.4', async () => {
    metrics.recordBatch({ records: 3, byClass: { leak: { consumed: 3, synthetic: 9, originalsEmitted: 0, thinned: 0, guardDropped: 0 } }, deadLetters: {}, modelRows: 3, modelMs: 4 });
    const response = await call('GET', '/metrics');
    expect(response.status).toBe(200);
    // Content type from Prometheus' "Exposition formats" page: `text/plain; version=0.0.4`.
    expect(response.headers['content-type']).toMatch(/^text\/plain; version=0\.0\.4/);
    expect(response.body).toContain('raretide_synthetic_emitted_total{class="leak"} 9\n');
  });

  it('answers /healthz 200 while the loop beats, 503 once the heartbeat is older than the bound', async () => {
    heartbeat.beat();
    clock.time += 10_000;
    const alive = await call('GET', '/healthz');
    expect(alive.status).toBe(200);
    expect(JSON.parse(alive.body)).toEqual({ status: 'alive', sinceBeatMs: 10_000 });
    clock.time += 1;
    const stalled = await call('GET', '/healthz');
    expect(stalled.status).toBe(503);
    expect(JSON.parse(stalled.body).reason).toBe('the worker loop has not ticked for 10001 ms (bound 10000 ms)');
    heartbeat.beat();
    expect((await call('GET', '/healthz')).status).toBe(200);
  });

  it('answers /readyz 503 with what it waits for until every condition holds, and again when one stops holding', async () => {
    const waiting = await call('GET', '/readyz');
    expect(waiting.status).toBe(503);
    expect(JSON.parse(waiting.body)).toEqual({ status: 'not ready', reason: 'waiting for: consumer assigned, model loaded', waitingFor: ['consumer assigned', 'model loaded'] });
    readiness.set('model loaded', true);
    expect(JSON.parse((await call('GET', '/readyz')).body).waitingFor).toEqual(['consumer assigned']);
    readiness.set('consumer assigned', true);
    const ready = await call('GET', '/readyz?verbose=1');
    expect(ready.status).toBe(200);
    expect(JSON.parse(ready.body)).toEqual({ status: 'ready' });
    readiness.set('consumer assigned', false);
    expect((await call('GET', '/readyz')).status).toBe(503);
  });

  it('answers 404 for other paths and 405 with Allow: GET for other methods', async () => {
    expect((await call('GET', '/')).status).toBe(404);
    expect((await call('GET', '/metrics/extra')).status).toBe(404);
    for (const method of ['POST', 'PUT', 'DELETE', 'HEAD']) {
      const response = await call(method, '/metrics');
      expect(response.status).toBe(405);
      expect(response.headers.allow).toBe('GET');
    }
  });

  it('refuses a taken port with a message naming metrics.port and the fix', async () => {
    const attempt = startOpsServer({ host: '127.0.0.1', port: server.port, metrics: () => '', liveness: () => heartbeat.status(), readiness: () => readiness.status() });
    await expect(attempt).rejects.toThrow(RaretideError);
    await expect(attempt).rejects.toThrow(/metrics\.port.*EADDRINUSE.*choose a free port/);
  });

  it('answers 500 when rendering fails, and closes promptly with a keep-alive client connected', async () => {
    const failing = await startOpsServer({
      host: '127.0.0.1',
      port: 0,
      metrics: () => {
        throw new Error('collector broke');
      },
      liveness: () => heartbeat.status(),
      readiness: () => readiness.status(),
    });
    const response = await fetch(`${failing.url}/metrics`); // undici keeps the connection alive
    expect(response.status).toBe(500);
    await response.text();
    const started = performance.now();
    await failing.close(2_000);
    expect(performance.now() - started).toBeLessThan(1_000);
  });

  it('cuts a connection stuck mid-request when the close bound passes', async () => {
    const stuck = await startOpsServer({ host: '127.0.0.1', port: 0, metrics: () => '', liveness: () => heartbeat.status(), readiness: () => readiness.status() });
    const socket = connect(stuck.port, '127.0.0.1');
    const cut = new Promise<void>((resolve) => socket.on('close', () => resolve()));
    socket.on('error', () => undefined);
    await new Promise<void>((resolve) => socket.on('connect', () => resolve()));
    socket.write('GET /metrics HTTP/1.1\r\nHost: 127.0.0.1\r\n'); // headers never finished
    await stuck.close(200);
    await cut;
  });
});

describe('isLoopbackHost', () => {
  it.each([
    ['127.0.0.1', true],
    ['127.1.2.3', true],
    ['localhost', true],
    ['::1', true],
    ['[::1]', true],
    ['::ffff:127.0.0.1', true],
    ['0.0.0.0', false],
    ['::', false],
    ['10.0.0.5', false],
    ['metrics.internal', false],
  ])('%s → %s', (host, loopback) => {
    expect(isLoopbackHost(host)).toBe(loopback);
    expect(exposureWarning(host) === undefined).toBe(loopback);
  });

  it('words the warning for an exposed host (logged, not refused: the config decides)', () => {
    expect(exposureWarning('0.0.0.0')).toBe('metrics.host is 0.0.0.0, not a loopback address: /metrics, /healthz and /readyz are reachable from the network without authentication');
  });
});
