/**
 * The worker's one HTTP endpoint: `GET /metrics` (Prometheus text 0.0.4), `GET /healthz` (liveness: the
 * worker loop ticked recently) and `GET /readyz` (readiness: consumer assigned, model loaded…). It binds
 * the configured `metrics.host`, loopback by default; another address is the config's decision, which is
 * honoured with a warning line because the endpoints carry no authentication.
 */
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';

import { RaretideError } from '../../config/errors.js';
import { EXPOSITION_CONTENT_TYPE } from './exposition-format.js';
import { SILENT_LOGGER, type Logger } from './logger.js';
import type { LivenessStatus, ReadinessStatus } from './probes.js';

export interface OpsServerOptions {
  /** `metrics.host` of the config. */
  readonly host: string;
  /** `metrics.port` of the config; 0 picks a free port (read it back from `OpsServer.port`). */
  readonly port: number;
  /** The exposition text, rendered per scrape. */
  readonly metrics: () => string;
  readonly liveness: () => LivenessStatus;
  readonly readiness: () => ReadinessStatus;
  readonly log?: Logger;
}

export interface OpsServer {
  readonly host: string;
  /** The bound port (the chosen one when 0 was asked for). */
  readonly port: number;
  /** Base URL, e.g. `http://127.0.0.1:9464`. */
  readonly url: string;
  /** Stops accepting connections and closes idle ones; connections still busy after `timeoutMs` (default 2 s) are cut. */
  close(timeoutMs?: number): Promise<void>;
}

/** 127.0.0.0/8, ::1 and `localhost`. */
export function isLoopbackHost(host: string): boolean {
  const bare = host.replace(/^\[(.*)\]$/, '$1').toLowerCase();
  return bare === 'localhost' || bare === '::1' || /^(::ffff:)?127\.\d{1,3}\.\d{1,3}\.\d{1,3}$/.test(bare);
}

/** The warning logged when the endpoints are exposed beyond this machine, or undefined for loopback hosts. */
export function exposureWarning(host: string): string | undefined {
  if (isLoopbackHost(host)) return undefined;
  return `metrics.host is ${host}, not a loopback address: /metrics, /healthz and /readyz are reachable from the network without authentication`;
}

export async function startOpsServer(options: OpsServerOptions): Promise<OpsServer> {
  const log = options.log ?? SILENT_LOGGER;
  const warning = exposureWarning(options.host);
  if (warning !== undefined) log.warn(warning, { host: options.host });
  const server = createServer((request, response) => respond(request, response, options, log));
  await new Promise<void>((resolve, reject) => {
    server.once('error', (error: NodeJS.ErrnoException) => {
      reject(
        new RaretideError('ops.listen', `cannot listen on ${options.host}:${options.port} (metrics.host, metrics.port): ${error.code ?? error.message}; choose a free port (0 picks one) or another host`, {
          cause: error,
        }),
      );
    });
    server.listen(options.port, options.host, () => resolve());
  });
  const { port } = server.address() as AddressInfo;
  const urlHost = options.host.includes(':') && !options.host.startsWith('[') ? `[${options.host}]` : options.host;
  log.info(`serving /metrics, /healthz and /readyz on http://${urlHost}:${port}`, { host: options.host, port });

  return {
    host: options.host,
    port,
    url: `http://${urlHost}:${port}`,
    close: (timeoutMs = 2_000) =>
      new Promise<void>((resolve) => {
        const cutBusy = setTimeout(() => server.closeAllConnections(), timeoutMs);
        cutBusy.unref();
        server.close(() => {
          clearTimeout(cutBusy);
          resolve();
        });
        server.closeIdleConnections();
      }),
  };
}

function respond(request: IncomingMessage, response: ServerResponse, options: OpsServerOptions, log: Logger): void {
  const path = new URL(request.url ?? '/', 'http://ops.invalid').pathname;
  if (path !== '/metrics' && path !== '/healthz' && path !== '/readyz') {
    send(response, 404, 'text/plain; charset=utf-8', 'not found: try /metrics, /healthz or /readyz\n');
    return;
  }
  if (request.method !== 'GET') {
    response.setHeader('Allow', 'GET');
    send(response, 405, 'text/plain; charset=utf-8', `${request.method ?? 'this method'} is not allowed on ${path}; use GET\n`);
    return;
  }
  if (path === '/metrics') {
    let text: string;
    try {
      text = options.metrics();
    } catch (error) {
      log.error('rendering metrics failed', { error });
      send(response, 500, 'text/plain; charset=utf-8', 'rendering metrics failed; see the worker log\n');
      return;
    }
    send(response, 200, EXPOSITION_CONTENT_TYPE, text);
  } else if (path === '/healthz') {
    const status = options.liveness();
    if (status.alive) sendJson(response, 200, { status: 'alive', sinceBeatMs: status.sinceBeatMs });
    else sendJson(response, 503, { status: 'stalled', reason: `the worker loop has not ticked for ${status.sinceBeatMs} ms (bound ${status.staleAfterMs} ms)` });
  } else {
    const status = options.readiness();
    if (status.ready) sendJson(response, 200, { status: 'ready' });
    else sendJson(response, 503, { status: 'not ready', reason: `waiting for: ${status.waitingFor.join(', ')}`, waitingFor: status.waitingFor });
  }
}

function sendJson(response: ServerResponse, statusCode: number, body: Readonly<Record<string, unknown>>): void {
  send(response, statusCode, 'application/json; charset=utf-8', `${JSON.stringify(body)}\n`);
}

function send(response: ServerResponse, statusCode: number, contentType: string, body: string): void {
  response.writeHead(statusCode, { 'Content-Type': contentType, 'Cache-Control': 'no-store', 'Content-Length': Buffer.byteLength(body) });
  response.end(body);
}
