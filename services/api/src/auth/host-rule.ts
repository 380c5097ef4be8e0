/**
 * Which Host headers the API answers to. A page served from another name that resolves to this
 * machine (DNS rebinding: attacker.example first points at the attacker, then at 127.0.0.1) is
 * same-origin with attacker.example, so the browser sends its requests here with that Host and
 * a matching Origin; only the Host tells them apart. Names are therefore refused unless they are a
 * loopback name or one the operator configured. An IP address literal cannot be rebound, so it is
 * answered when the API listens beyond loopback (the OWASP DNS-rebinding guidance, from memory).
 */
import { isIP } from 'node:net';

export interface HostRule {
  /** Configured host names, lower case, each optionally with ':port' (then only that port). */
  readonly publicHosts: readonly string[];
  /** The address the server listens on (HOST). */
  readonly listenHost: string;
}

const LOOPBACK_NAMES = new Set(['localhost', '127.0.0.1', '[::1]']);
const LOOPBACK_LISTEN = new Set(['localhost', '127.0.0.1', '::1', '[::1]']);

export function listensOnLoopbackOnly(listenHost: string): boolean {
  return LOOPBACK_LISTEN.has(listenHost.toLowerCase());
}

/** Split 'name:port' / '[v6]:port' into name and port; undefined for a malformed value. */
export function splitHost(value: string): { name: string; port: string | undefined } | undefined {
  const host = value.trim().toLowerCase();
  const match = /^(\[[0-9a-f:.]+\]|[^:[\]]+)(?::(\d{1,5}))?$/.exec(host);
  if (match === null) return undefined;
  return { name: match[1]!, port: match[2] };
}

function isAddressLiteral(name: string): boolean {
  return isIP(name.startsWith('[') ? name.slice(1, -1) : name) !== 0;
}

/** True when a request with this Host header is for us. */
export function hostAllowed(header: string | undefined, rule: HostRule): boolean {
  const host = header === undefined ? undefined : splitHost(header);
  if (host === undefined) return false;
  if (LOOPBACK_NAMES.has(host.name)) return true;
  for (const entry of rule.publicHosts) {
    const allowed = splitHost(entry);
    if (allowed?.name === host.name && (allowed.port === undefined || allowed.port === host.port))
      return true;
  }
  return !listensOnLoopbackOnly(rule.listenHost) && isAddressLiteral(host.name);
}
