import { createConnection, createServer, type AddressInfo } from 'node:net';
import { setTimeout as delay } from 'node:timers/promises';

/**
 * Asks the OS for `count` distinct free ports on 127.0.0.1, holding all of them open until
 * every one is known so the same port is never handed out twice.
 */
export async function findFreePorts(count: number): Promise<number[]> {
  const servers = await Promise.all(
    Array.from({ length: count }, () => new Promise<ReturnType<typeof createServer>>((resolve, reject) => {
      const server = createServer();
      server.once('error', reject);
      server.listen(0, '127.0.0.1', () => resolve(server));
    })),
  );
  const ports = servers.map((server) => (server.address() as AddressInfo).port);
  await Promise.all(servers.map((server) => new Promise<void>((resolve) => server.close(() => resolve()))));
  return ports;
}

export function canConnect(host: string, port: number, timeoutMs = 1_000): Promise<boolean> {
  return new Promise((resolve) => {
    const socket = createConnection({ host, port });
    const finish = (open: boolean) => {
      socket.destroy();
      resolve(open);
    };
    socket.setTimeout(timeoutMs, () => finish(false));
    socket.once('connect', () => finish(true));
    socket.once('error', () => finish(false));
  });
}

/**
 * Waits until `host:port` accepts connections. `stillWorthWaiting` lets the caller give up
 * early, e.g. when the process that should open the port has already exited.
 */
export async function waitForPort(host: string, port: number, deadline: number, stillWorthWaiting: () => string | undefined): Promise<void> {
  for (;;) {
    const reasonToStop = stillWorthWaiting();
    if (reasonToStop) throw new Error(reasonToStop);
    if (await canConnect(host, port)) return;
    if (Date.now() >= deadline) throw new Error(`${host}:${port} did not accept connections before the deadline`);
    await delay(100);
  }
}
