/**
 * Part 3: every route of the OpenAPI document without a session, as viewer, engineer and
 * admin, with injection strings in every parameter, and cross-site (foreign Origin, text/plain
 * body: a form post a page can send without a preflight) with a session cookie. A write a
 * lower role gets through (a changed database or a 2xx answer), another user's data in an
 * answer, a 5xx or a database error text fail the run. Then the cookie flags, the Host rule
 * and sign-in rate limiting.
 */
import { request } from 'node:http';
import { type Answer, type Call, type Caller, call, signIn, type Who } from './access-http.js';
import { INJECTIONS, type RouteSpec, routesOf, sample } from './access-routes.js';
import type { Verdict } from './report.js';
import { ADMIN_PASSWORD, type World } from './world.js';

const RANK: Record<Who, number> = { anonymous: 0, viewer: 1, engineer: 2, admin: 3 };
/** Least role for each write, from the README (engineer: bands, baselines, alerts; admin: users, tokens, plant). */
const WRITE_ROLE: readonly [RegExp, Who][] = [
  [/^POST \/api\/auth\/(login|logout)$/, 'anonymous'],
  [/^POST \/api\/auth\/password$/, 'viewer'],
  [/^(POST|PUT) \/api\/machines\/\{id\}\/(bands|baselines)$/, 'engineer'],
  [/^POST \/api\/alerts\/\{id\}\/(acknowledge|shelve|unshelve)$/, 'engineer'],
  [/^POST \/api\/exports$/, 'engineer'],
];
const SELF_ENDING = /^(POST \/api\/auth\/(logout|password)|POST \/api\/users\/\{id\}\/password|DELETE )/;
const LEAK = /syntax error|pg_catalog|relation "|at character \d|duplicate key value/i;

function leastRole(r: RouteSpec): Who {
  const key = `${r.method} ${r.path}`;
  return WRITE_ROLE.find(([re]) => re.test(key))?.[1] ?? 'admin';
}

interface Ids {
  machine: number;
  alert: number;
  tag: number;
  otherUser: number;
  otherToken: number;
}

async function fingerprint(world: World): Promise<string> {
  const tables = [
    'sites',
    'machines',
    'tags',
    'sources',
    'bands',
    'baselines',
    'alerts',
    'alert_events',
    'notifications',
    'exports',
    'users',
    'machine_status',
  ];
  const parts = tables.map(
    (t) => `(SELECT md5(coalesce(string_agg(x::text, '|' ORDER BY x::text), '')) FROM ${t} x)`,
  );
  parts.push(
    `(SELECT md5(coalesce(string_agg(concat_ws(',', id, user_id, name, revoked_at, expires_at), '|' ORDER BY id), '')) FROM api_tokens WHERE name <> 'browser session')`,
  );
  const r = await world.pool.query<{ f: string }>(`SELECT concat_ws(',', ${parts.join(', ')}) AS f`);
  return r.rows[0]?.f ?? '';
}

function pathFor(r: RouteSpec, ids: Ids, value: string | undefined): string {
  let path = r.path;
  for (const p of r.pathParams) {
    let v: string;
    if (value !== undefined) v = encodeURIComponent(value);
    else if (path.startsWith('/api/alerts')) v = String(ids.alert);
    else if (path.startsWith('/api/tags')) v = String(ids.tag);
    else if (path.startsWith('/api/users')) v = String(ids.otherUser);
    else if (path.startsWith('/api/tokens')) v = String(ids.otherToken);
    else if (p === 'slug') v = 'fb-p1';
    else v = String(ids.machine);
    path = path.replace(`{${p}}`, v);
  }
  const query = r.queryParams
    .filter((q) => value !== undefined || q.required)
    .map((q) => `${q.name}=${encodeURIComponent(value ?? String(sample(q.schema, undefined, q.name)))}`);
  return query.length === 0 ? path : `${path}?${query.join('&')}`;
}

interface Finding {
  readonly kind:
    | 'refused to its own role (coverage)'
    | 'lower role wrote'
    | 'other user data'
    | '5xx'
    | 'database error text'
    | 'cross-site write'
    | 'anonymous 400 before 401';
  readonly what: string;
}

async function probe(
  world: World,
  r: RouteSpec,
  caller: Caller,
  c: Call,
  others: readonly string[],
  findings: Finding[],
): Promise<Answer> {
  const write = r.method !== 'GET';
  const before = write ? await fingerprint(world) : '';
  const a = await call(world.app.baseUrl, caller, c);
  const label = `${c.method} ${c.path.slice(0, 120)} as ${caller.who}${c.origin === undefined ? '' : ` from ${c.origin}`}: ${a.status}`;
  if (a.status >= 500) findings.push({ kind: '5xx', what: label });
  if (LEAK.test(a.text)) findings.push({ kind: 'database error text', what: label });
  if (others.some((o) => a.text.includes(o))) findings.push({ kind: 'other user data', what: label });
  if (write && RANK[caller.who] < RANK[leastRole(r)]) {
    const changed = (await fingerprint(world)) !== before;
    if (changed || (a.status >= 200 && a.status < 300))
      findings.push({ kind: 'lower role wrote', what: `${label}${changed ? ' (database changed)' : ''}` });
  }
  if (caller.who === 'anonymous' && a.status === 400 && leastRole(r) !== 'anonymous')
    findings.push({ kind: 'anonymous 400 before 401', what: label });
  return a;
}

export interface AccessSetup {
  readonly callers: Caller[];
  readonly ids: Ids;
  readonly setCookie: string;
}

async function setUp(world: World): Promise<AccessSetup> {
  const base = world.app.baseUrl;
  const admin = await signIn(base, 'admin', ADMIN_PASSWORD, 'admin');
  const mk = async (username: string, role: string) => {
    const a = await call(base, admin.caller, {
      method: 'POST',
      path: '/api/users',
      body: JSON.stringify({ username, password: `${username}-password-1234`, role }),
    });
    if (a.status >= 300) throw new Error(`creating user ${username} answered ${a.status}: ${a.text}`);
  };
  await mk('fault-viewer', 'viewer');
  await mk('fault-engineer', 'engineer');
  await mk('fault-other', 'viewer');
  const viewer = await signIn(base, 'fault-viewer', 'fault-viewer-password-1234', 'viewer');
  const engineer = await signIn(base, 'fault-engineer', 'fault-engineer-password-1234', 'engineer');
  const q = await world.pool.query<{ machine: number; tag: number; other: number }>(
    `SELECT (SELECT id FROM machines WHERE slug = 'fb-p1') AS machine, (SELECT min(id) FROM tags) AS tag, (SELECT id FROM users WHERE username = 'fault-other') AS other`,
  );
  const row = q.rows[0];
  if (row === undefined) throw new Error('no machine for the access part');
  const alert = await world.pool.query<{ id: number }>(
    `INSERT INTO alerts (machine_id, category, level, severity, state, message, raised_at) VALUES ($1, 'drift', 'warning', 'medium', 'active_unacknowledged', 'INVENTED alert of the faults suite', now()) RETURNING id::int`,
    [row.machine],
  );
  const token = await world.pool.query<{ id: number }>(
    `INSERT INTO api_tokens (user_id, name, token_hash, prefix) VALUES ($1, 'fault-other-token', md5(random()::text), 'ist_x') RETURNING id`,
    [row.other],
  );
  return {
    callers: [
      { who: 'anonymous', cookie: undefined, username: undefined },
      viewer.caller,
      engineer.caller,
      admin.caller,
    ],
    ids: {
      machine: row.machine,
      alert: alert.rows[0]?.id ?? 0,
      tag: row.tag,
      otherUser: row.other,
      otherToken: token.rows[0]?.id ?? 0,
    },
    setCookie: admin.setCookie,
  };
}

/** Every route as every caller, with and without injection strings; then cross-site writes. */
async function sweep(
  world: World,
  routes: RouteSpec[],
  setup: AccessSetup,
  injections: readonly string[],
): Promise<Finding[]> {
  const findings: Finding[] = [];
  const others = ['fault-other-token', 'fault-other'];
  const ordered = [...routes].sort(
    (a, b) =>
      Number(SELF_ENDING.test(`${a.method} ${a.path}`)) - Number(SELF_ENDING.test(`${b.method} ${b.path}`)),
  );
  for (const r of ordered) {
    const key = `${r.method} ${r.path}`;
    for (const caller of setup.callers) {
      // The callers' own sessions must outlive the sweep: no self-ending call with a role allowed to make it.
      if (SELF_ENDING.test(key) && RANK[caller.who] >= RANK[leastRole(r)]) continue;
      if (key === 'POST /api/auth/login') continue; // the rate-limit check below covers it
      const visible = caller.who === 'admin' ? [] : others;
      for (const value of [undefined, ...injections]) {
        const body = r.body === undefined ? undefined : JSON.stringify(sample(r.body, value));
        const a = await probe(
          world,
          r,
          caller,
          { method: r.method, path: pathFor(r, setup.ids, value), body },
          visible,
          findings,
        );
        // Coverage: a write refused by its schema even to a role allowed to make it tells nothing about the role check.
        if (
          value === undefined &&
          r.method !== 'GET' &&
          RANK[caller.who] >= RANK[leastRole(r)] &&
          (a.status === 400 || a.status === 422)
        )
          findings.push({
            kind: 'refused to its own role (coverage)',
            what: `${key} as ${caller.who}: ${a.status} ${a.text.slice(0, 140)}`,
          });
      }
    }
    if (r.method !== 'GET' && !SELF_ENDING.test(key) && key !== 'POST /api/auth/login') {
      const allowed = setup.callers.find((c) => RANK[c.who] >= RANK[leastRole(r)] && c.who !== 'anonymous');
      if (allowed !== undefined) {
        const before = await fingerprint(world);
        const body = JSON.stringify(sample(r.body, undefined));
        const a = await call(world.app.baseUrl, allowed, {
          method: r.method,
          path: pathFor(r, setup.ids, undefined),
          body,
          contentType: 'text/plain',
          origin: 'http://attacker.example',
        });
        if ((await fingerprint(world)) !== before || (a.status >= 200 && a.status < 300))
          findings.push({
            kind: 'cross-site write',
            what: `${key} as ${allowed.who}, Origin http://attacker.example, text/plain: ${a.status}`,
          });
      }
    }
  }
  return findings;
}

/** A request whose Host is not the configured one (DNS rebinding): must be refused. */
function foreignHost(port: number, cookie: string | undefined): Promise<number> {
  return new Promise((resolve) => {
    const req = request(
      {
        host: '127.0.0.1',
        port,
        path: '/api/machines',
        headers: { host: `attacker.example:${port}`, ...(cookie === undefined ? {} : { cookie }) },
      },
      (res) => {
        res.resume();
        resolve(res.statusCode ?? 0);
      },
    );
    req.on('error', () => resolve(0));
    req.end();
  });
}

/** The Set-Cookie of an admin sign-in that a TLS proxy on 127.0.0.1 forwarded (X-Forwarded-Proto: https). */
async function cookieBehindTls(world: World): Promise<string> {
  const r = await fetch(`${world.app.baseUrl}/api/auth/login`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', 'x-forwarded-proto': 'https' },
    body: JSON.stringify({ username: 'admin', password: ADMIN_PASSWORD }),
  });
  await r.arrayBuffer();
  return r.headers.get('set-cookie') ?? '';
}

async function signInLimit(
  world: World,
): Promise<{ trippedAfter: number | undefined; adminLockedOut: boolean }> {
  let trippedAfter: number | undefined;
  for (let i = 1; i <= 60 && trippedAfter === undefined; i++) {
    const a = await call(
      world.app.baseUrl,
      { who: 'anonymous', cookie: undefined, username: undefined },
      {
        method: 'POST',
        path: '/api/auth/login',
        body: JSON.stringify({ username: 'fault-viewer', password: `wrong-password-${i}` }),
      },
    );
    if (a.status === 429) trippedAfter = i;
  }
  const admin = await call(
    world.app.baseUrl,
    { who: 'anonymous', cookie: undefined, username: undefined },
    {
      method: 'POST',
      path: '/api/auth/login',
      body: JSON.stringify({ username: 'admin', password: ADMIN_PASSWORD }),
    },
  );
  return { trippedAfter, adminLockedOut: admin.status === 429 };
}

export async function accessPart(
  world: World,
  short: boolean,
  say: (l: string) => void,
): Promise<{ verdicts: Verdict[]; figures: Record<string, number> }> {
  const doc = (await (await fetch(`${world.app.baseUrl}/api/openapi.json`)).json()) as Parameters<
    typeof routesOf
  >[0];
  const routes = routesOf(doc);
  say(`\naccess: ${routes.length} routes in /api/openapi.json, as anonymous, viewer, engineer, admin`);
  const setup = await setUp(world);
  const findings = await sweep(world, routes, setup, short ? INJECTIONS.slice(0, 1) : INJECTIONS);
  const flags = setup.setCookie.toLowerCase();
  const admin = setup.callers.find((c) => c.who === 'admin');
  const host = await foreignHost(world.app.options.port, admin?.cookie);
  const behindTls = await cookieBehindTls(world);
  const limit = await signInLimit(world);
  const byKind = new Map<string, string[]>();
  for (const f of findings) byKind.set(f.kind, [...(byKind.get(f.kind) ?? []), f.what]);
  for (const [k, list] of byKind)
    say(`  ${k}: ${list.length}, e.g.\n    ${list.slice(0, k.includes('coverage') ? 20 : 3).join('\n    ')}`);
  const v = (target: string, list: string[] | undefined): Verdict => ({
    part: 'access',
    target,
    ok: (list ?? []).length === 0,
    detail: list === undefined ? '0' : `${list.length}: ${list.slice(0, 2).join('; ')}`,
  });
  const verdicts: Verdict[] = [
    v('no write by a lower role', byKind.get('lower role wrote')),
    v("no other user's data", byKind.get('other user data')),
    v('no 5xx, no database error text, injection strings included', [
      ...(byKind.get('5xx') ?? []),
      ...(byKind.get('database error text') ?? []),
    ]),
    v('no cross-site write with a session cookie', byKind.get('cross-site write')),
    v('role checked before the body (anonymous gets 401, not 400)', byKind.get('anonymous 400 before 401')),
    {
      part: 'access',
      target: 'session cookie HttpOnly, SameSite=Strict',
      ok: flags.includes('httponly') && flags.includes('samesite=strict'),
      detail: setup.setCookie.replace(/=[^;]+/, '=...'),
    },
    {
      // Over plain http the cookie cannot be Secure (the browser would drop it); behind TLS it must be.
      part: 'access',
      target: 'session cookie Secure behind TLS',
      ok: behindTls.toLowerCase().includes('; secure'),
      detail: `over http: ${flags.includes('; secure') ? 'Secure' : 'no Secure flag'}; via a TLS proxy: ${behindTls.toLowerCase().includes('; secure') ? 'Secure' : 'no Secure flag'}`,
    },
    {
      part: 'access',
      target: 'foreign Host refused',
      ok: host >= 400 && host < 500,
      detail: `Host attacker.example answered ${host}`,
    },
    {
      part: 'access',
      target: 'sign-in rate limited',
      ok: limit.trippedAfter !== undefined,
      detail:
        limit.trippedAfter === undefined
          ? 'no 429 in 60 wrong sign-ins'
          : `429 after ${limit.trippedAfter} wrong sign-ins`,
    },
    {
      part: 'access',
      target: 'the limit does not lock the real admin out',
      ok: !limit.adminLockedOut,
      detail: limit.adminLockedOut ? 'admin with the right password got 429' : 'admin signs in',
    },
  ];
  return { verdicts, figures: { routes: routes.length, findings: findings.length } };
}
