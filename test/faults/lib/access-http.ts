/** HTTP for the access part: one call with a principal, paced under the per-address limit. */
import { sleep } from './random.js';

export type Who = 'anonymous' | 'viewer' | 'engineer' | 'admin';

export interface Caller {
  readonly who: Who;
  readonly cookie: string | undefined;
  readonly username: string | undefined;
}

export interface Call {
  readonly method: string;
  readonly path: string;
  readonly body?: string | undefined;
  readonly contentType?: string | undefined;
  /** Sent as Origin (a cross-site page's request when foreign). */
  readonly origin?: string | undefined;
  readonly host?: string | undefined;
}

export interface Answer {
  readonly status: number;
  readonly text: string;
  readonly headers: Headers;
}

/** One request; a 429 waits as told (Retry-After, else 5 s) and tries again, at most 20 times. */
export async function call(base: string, caller: Caller, c: Call): Promise<Answer> {
  for (let attempt = 0; attempt < 20; attempt++) {
    const headers: Record<string, string> = {};
    if (caller.cookie !== undefined) headers.cookie = caller.cookie;
    if (c.body !== undefined) headers['content-type'] = c.contentType ?? 'application/json';
    if (c.origin !== undefined) headers.origin = c.origin;
    if (c.host !== undefined) headers.host = c.host;
    const r = await fetch(`${base}${c.path}`, {
      method: c.method,
      headers,
      ...(c.body === undefined ? {} : { body: c.body }),
      redirect: 'manual',
      signal: AbortSignal.timeout(30_000),
    });
    const text = await r.text();
    if (r.status !== 429 || c.path === '/api/auth/login')
      return { status: r.status, text, headers: r.headers };
    const wait = Number(r.headers.get('retry-after') ?? '5');
    await sleep(Math.min(60, Number.isFinite(wait) && wait > 0 ? wait : 5) * 1000);
  }
  return { status: 429, text: '', headers: new Headers() };
}

export async function signIn(
  base: string,
  username: string,
  password: string,
  who: Who,
): Promise<{ caller: Caller; setCookie: string }> {
  const r = await fetch(`${base}/api/auth/login`, {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify({ username, password }),
  });
  const setCookie = r.headers.get('set-cookie') ?? '';
  await r.arrayBuffer();
  if (r.status !== 200) throw new Error(`sign-in of ${username} answered ${r.status}`);
  const cookie = setCookie.split(';')[0];
  return { caller: { who, cookie, username }, setCookie };
}
