/**
 * Listening TCP sockets as the Linux kernel reports them in /proc/net/tcp and /proc/net/tcp6 (format
 * described in the kernel's Documentation/networking/proc_net_tcp.rst): each row's `local_address` is
 * the address in hex, 32-bit words in host byte order (little-endian here), a colon, and the port in
 * hex; state `0A` is LISTEN. Read from the kernel, not from what the worker says about itself.
 */
import { readFile } from 'node:fs/promises';

export interface ListeningSocket {
  /** Dotted IPv4 or full-form IPv6, e.g. `127.0.0.1`, `0.0.0.0`, `0:0:0:0:0:0:0:1`. */
  readonly address: string;
  readonly port: number;
}

const LISTEN = '0A';

/** Parses the text of /proc/net/tcp or /proc/net/tcp6. */
export function parseProcNetTcp(text: string): ListeningSocket[] {
  return text
    .split('\n')
    .slice(1)
    .map((line) => line.trim().split(/\s+/))
    .filter((fields) => fields.length > 3 && fields[3] === LISTEN)
    .map((fields) => {
      const [addressHex, portHex] = fields[1]!.split(':') as [string, string];
      return { address: addressHex.length === 8 ? ipv4(addressHex) : ipv6(addressHex), port: Number.parseInt(portHex, 16) };
    });
}

/** Every listening TCP socket of this machine's network namespace. */
export async function listeningSockets(): Promise<ListeningSocket[]> {
  const tables = await Promise.all(['/proc/net/tcp', '/proc/net/tcp6'].map((path) => readFile(path, 'utf8').catch(() => '')));
  return tables.flatMap(parseProcNetTcp);
}

export function isLoopback(address: string): boolean {
  return address.startsWith('127.') || address === '0:0:0:0:0:0:0:1' || /^0:0:0:0:0:ffff:7f[0-9a-f]{2}:/.test(address);
}

/** Bytes of one 32-bit word written little-endian, in address order. */
function wordBytes(hex: string): number[] {
  return [6, 4, 2, 0].map((at) => Number.parseInt(hex.slice(at, at + 2), 16));
}

function ipv4(hex: string): string {
  return wordBytes(hex).join('.');
}

function ipv6(hex: string): string {
  const bytes = [0, 8, 16, 24].flatMap((at) => wordBytes(hex.slice(at, at + 8)));
  const groups: string[] = [];
  for (let at = 0; at < 16; at += 2) groups.push(((bytes[at]! << 8) | bytes[at + 1]!).toString(16));
  return groups.join(':');
}
