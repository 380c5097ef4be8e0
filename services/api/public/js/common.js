// Shared helpers of the dashboard pages (plain ES modules, no build step).

/** An API problem (application/problem+json) as an Error with its stable code. */
export class ApiProblem extends Error {
  constructor(problem) {
    super(problem.detail ?? problem.title ?? 'request failed');
    this.code = problem.code;
    this.status = problem.status;
  }
}

/** fetch JSON from the API; a 401 sends the browser to the sign-in page. */
export async function api(path, options = {}) {
  const init = { credentials: 'same-origin', headers: { accept: 'application/json' }, ...options };
  if (options.body !== undefined) {
    init.method = options.method ?? 'POST';
    init.headers = { ...init.headers, 'content-type': 'application/json' };
    init.body = JSON.stringify(options.body);
  }
  const res = await fetch(path, init);
  if (res.status === 401 && !location.pathname.endsWith('/login.html')) {
    location.href = `/login.html?next=${encodeURIComponent(location.pathname + location.search)}`;
    throw new ApiProblem({ detail: 'sign-in needed', status: 401 });
  }
  if (res.status === 204) return null;
  const type = res.headers.get('content-type') ?? '';
  const body = type.includes('json') ? await res.json() : await res.text();
  if (!res.ok)
    throw new ApiProblem(typeof body === 'object' ? body : { detail: String(body), status: res.status });
  return body;
}

export function pct(v, digits = 1) {
  return v === null || v === undefined || !Number.isFinite(v) ? '–' : (100 * v).toFixed(digits);
}

export function num(v, digits = 1) {
  return v === null || v === undefined || !Number.isFinite(v) ? '–' : v.toFixed(digits);
}

export function signed(v, digits = 2) {
  if (v === null || v === undefined || !Number.isFinite(v)) return '–';
  return `${v > 0 ? '+' : v < 0 ? '−' : ''}${Math.abs(v).toFixed(digits)}`;
}

/** Power [W] in kW or MW. */
export function power(w) {
  if (w === null || w === undefined || !Number.isFinite(w)) return '–';
  return Math.abs(w) >= 1e6 ? `${(w / 1e6).toFixed(2)} MW` : `${(w / 1e3).toFixed(0)} kW`;
}

export function when(iso) {
  if (!iso) return '–';
  const d = new Date(iso);
  return `${d.toISOString().slice(0, 10)} ${d.toISOString().slice(11, 16)} UTC`;
}

export function el(tag, attrs = {}, ...children) {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (v === undefined || v === null || v === false) continue;
    if (k === 'class') e.className = v;
    else if (k === 'text') e.textContent = v;
    else if (k.startsWith('on')) e.addEventListener(k.slice(2), v);
    else e.setAttribute(k, v === true ? '' : String(v));
  }
  for (const c of children) if (c !== null && c !== undefined) e.append(c);
  return e;
}

/** Mark the current page in the navigation and show who is signed in. */
export async function frame() {
  const page = document.body.dataset.page;
  for (const a of document.querySelectorAll('nav a'))
    if (a.dataset.nav === page) a.setAttribute('aria-current', 'page');
  const who = document.getElementById('who');
  try {
    const me = await api('/api/auth/me');
    who.textContent = me.kind === 'anonymous' ? `local access (${me.role})` : `${me.username} (${me.role})`;
    // Anonymous local access only reads; changing anything needs a signed-in user.
    if (me.kind === 'anonymous') {
      const next = encodeURIComponent(location.pathname + location.search);
      who.append(
        el('a', {
          href: `/login.html?next=${next}`,
          text: 'Sign in to change things',
          style: 'margin-left:.6rem',
        }),
      );
    }
    if (me.kind === 'user') {
      const account = el('a', { href: '/account.html', text: 'Account', style: 'margin-left:.6rem' });
      if (page === 'account') account.setAttribute('aria-current', 'page');
      who.append(account);
      const out = el('button', { text: 'Sign out', style: 'margin-left:.6rem' });
      out.addEventListener('click', async () => {
        await api('/api/auth/logout', { method: 'POST', body: {} });
        location.href = '/login.html';
      });
      who.append(out);
    }
    return me;
  } catch {
    return undefined;
  }
}

/** A duration [ms] in the largest plain unit: "12 min", "5 h", "73 days". */
export function age(ms) {
  if (!Number.isFinite(ms)) return '–';
  const min = Math.round(ms / 60_000);
  if (min < 120) return `${min} min`;
  const h = Math.round(ms / 3_600_000);
  if (h < 48) return `${h} h`;
  return `${Math.round(ms / 86_400_000)} days`;
}

/** ISO instants inside a text ("2026-12-01T02:42:00.000Z") written as the dashboard writes times. */
export function timesInText(text) {
  return text.replace(/\b(\d{4}-\d\d-\d\d)T(\d\d:\d\d)(?::\d\d(?:\.\d+)?)?Z\b/g, '$1 $2 UTC');
}

/** Pressure [Pa] as the trade writes it: bar above 1 bar, else mbar (and Pa below 10 mbar). */
export function pressureText(pa) {
  if (pa === null || pa === undefined || !Number.isFinite(pa)) return '–';
  const a = Math.abs(pa);
  if (a >= 1e5) return `${(pa / 1e5).toFixed(2)} bar`;
  if (a >= 1e3) return `${(pa / 100).toFixed(1)} mbar`;
  return `${pa.toFixed(0)} Pa`;
}

/** "1 drift alert, 2 instrument alerts" from a fleet item's counts. */
export function openAlertsText(m) {
  const by = m.openAlertsByCategory ?? { drift: m.openAlerts, instrument: 0 };
  const part = (n, what) => (n > 0 ? `${n} ${what} alert${n > 1 ? 's' : ''}` : null);
  return [part(by.drift, 'drift'), part(by.instrument, 'instrument')].filter((x) => x !== null).join(', ');
}
