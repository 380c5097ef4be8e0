import uPlot from '/vendor/uplot/uPlot.esm.js';
import {
  age,
  api,
  el,
  frame,
  num,
  openAlertsText,
  pct,
  power,
  pressureText,
  signed,
  when,
} from './common.js';
import { evidenceOf, handledText, messageOf, STATE_WORDS } from './evidence.js';
import { hsChart } from './hs-chart.js';

const DAY = 86_400_000;
const params = new URLSearchParams(location.search);
const CAUTION = document.getElementById('caution').textContent;

let effPlot;
let workPlot;
let loading = 0;
/** Power axis unit, chosen once from the first data drawn: kW below 1 MW. */
let powerUnit;

/** The machine id: ?id=, or ?slug= (and ?site= when slugs repeat across sites), as alert links give it. */
async function resolveId() {
  if (params.get('id') !== null) return Number(params.get('id'));
  const slug = params.get('slug');
  if (slug === null) throw new Error('No machine given: open one from the fleet page.');
  const site = params.get('site');
  const found = (await api('/api/machines')).items.filter(
    (m) => m.slug === slug && (site === null || m.site === site),
  );
  if (found.length === 1) return found[0].id;
  throw new Error(
    found.length === 0
      ? `There is no machine "${slug}"${site === null ? '' : ` on site ${site}`}.`
      : `"${slug}" names machines on the sites ${found.map((m) => m.site).join(', ')}; open it from the fleet page.`,
  );
}

function kpi(label, value, field, note) {
  return el(
    'div',
    { 'data-field': field },
    el('div', { class: 'sub', text: label }),
    el('div', { class: 'figure', text: value }),
    note ? el('div', { class: 'sub', text: note }) : null,
  );
}

const STATE_CLASS = { alarm: 'state-alarm', warning: 'state-warning', 'no-data': 'state-stale' };

async function header(id) {
  const [machine, fleet] = await Promise.all([api(`/api/machines/${id}`), api('/api/fleet')]);
  const f = fleet.items.find((m) => m.id === id);
  document.getElementById('title').textContent = machine.name;
  document.title = `${machine.name} · Isentrope`;
  const c = f?.current ?? null;
  // The API sends the state; the page only shows it.
  const state = f?.state ?? { key: 'unknown', label: '–', detail: '' };
  const k = document.getElementById('kpis');
  const u = c?.uEfficiency;
  k.replaceChildren(
    kpi(
      'Efficiency (last valid hour) %',
      pct(c?.efficiency),
      'efficiency',
      typeof u === 'number' ? `one result ± ${pct(2 * u)} (k = 2)` : null,
    ),
    kpi('Baseline %', pct(c?.baseline), 'baseline'),
    kpi('Drift, points', signed(c?.driftPts), 'drift'),
    kpi('Power', power(c?.power), 'power'),
    kpi('State', state.label, 'state'),
    el(
      'div',
      {},
      el('div', { class: 'sub', text: c ? `as of ${when(c.windowEnd)}` : 'no valid result yet' }),
    ),
  );
  k.dataset.state = state.key;
  k.className = `panel kpis ${STATE_CLASS[state.key] ?? ''}`;
  if (state.detail) k.append(el('p', { class: 'sub stale-note', 'data-field': 'stale', text: state.detail }));
  if (f !== undefined) {
    const text = openAlertsText(f);
    document.getElementById('alerts-count').textContent = text ? `(${text})` : '';
  }
  return { machine, fleetItem: f, generatedAt: fleet.generatedAt };
}

async function openAlerts(id) {
  const box = document.getElementById('machine-alerts');
  const page = await api(`/api/alerts?status=open&machine=${id}&limit=50`);
  box.replaceChildren(
    ...page.items.map((a) =>
      el(
        'div',
        { class: 'alert-item', 'data-alert': a.id, 'data-state': a.state },
        el('span', {
          class: `tag ${a.category === 'instrument' ? 'fault' : a.level}`,
          text: a.category === 'instrument' ? 'instrument' : 'drift',
        }),
        ' ',
        el('span', { class: `tag ${a.level}`, text: a.level }),
        ' ',
        el('span', { class: 'sub', text: `raised ${when(a.raisedAt)} · ${STATE_WORDS[a.state] ?? a.state}` }),
        handledText(a) ? el('span', { class: 'sub', text: ` · ${handledText(a)}` }) : null,
        el('div', {}, messageOf(a, CAUTION)),
        el('details', { 'data-field': 'evidence' }, el('summary', { text: 'Evidence' }), evidenceOf(a)),
      ),
    ),
  );
  if (page.items.length === 0) box.replaceChildren(el('p', { class: 'sub', text: 'No open alerts.' }));
  box.dataset.loaded = 'true';
}

// ---- trend charts (uPlot), times in UTC on a 24-hour clock like the rest of the dashboard ----

/**
 * Axis labels: hours and minutes with the date (MM-DD) where it changes, or dates alone for
 * steps of a day or more; the year only on the first label and where it changes.
 */
function timeLabels(_u, splits, _axis, _space, incr) {
  let lastDay = '';
  let lastYear = '';
  return splits.map((s) => {
    const iso = new Date(s * 1000).toISOString();
    const year = iso.slice(0, 4);
    const day = year !== lastYear ? iso.slice(0, 10) : iso.slice(5, 10);
    lastYear = year;
    if (incr >= 28 * 86_400) return iso.slice(0, 7);
    if (incr >= 86_400) return day;
    const hm = iso.slice(11, 16);
    const label = iso.slice(0, 10) !== lastDay ? `${hm}\n${day}` : hm;
    lastDay = iso.slice(0, 10);
    return label;
  });
}

function legendTime(_u, v) {
  return v === null || v === undefined ? '–' : when(new Date(v * 1000).toISOString());
}

function opts(title, series, width, extra = {}) {
  return {
    title,
    width,
    height: 260,
    tzDate: (ts) => uPlot.tzDate(new Date(ts * 1000), 'Etc/UTC'),
    series: [{ label: 'time (UTC)', value: legendTime }, ...series],
    cursor: { drag: { x: true, y: false } },
    scales: { x: { time: true } },
    legend: { live: true },
    ...extra,
    axes: [{ values: timeLabels, label: 'time (UTC)', labelSize: 20 }, ...(extra.axes ?? [{}])],
  };
}

function chartWidth() {
  return Math.max(300, document.getElementById('eff-chart').clientWidth - 4);
}

/** Fetch the trend for [from, to) at about one bucket per pixel and draw both charts. */
async function trend(id, kind, fromMs, toMs) {
  const ticket = ++loading;
  const width = chartWidth();
  const t = await api(
    `/api/machines/${id}/trend?from=${new Date(fromMs).toISOString()}&to=${new Date(toMs).toISOString()}&buckets=${Math.min(2000, width)}`,
  );
  if (ticket !== loading) return; // a newer zoom won
  const b = t.buckets;
  const x = b.map((r) => (r.t + t.bucketMs / 2) / 1000);
  const p = (v) => (v === null ? null : 100 * v);
  const eff = b.map((r) => p(r.efficiencyMean));
  const base = b.map((r) => p(r.baseline));
  // Uncertainty band: mean plus and minus twice the standard uncertainty (about 95 %, GUM coverage factor k = 2).
  const hi = b.map((r) =>
    r.efficiencyMean === null || r.uEfficiency === null ? null : 100 * (r.efficiencyMean + 2 * r.uEfficiency),
  );
  const lo = b.map((r) =>
    r.efficiencyMean === null || r.uEfficiency === null ? null : 100 * (r.efficiencyMean - 2 * r.uEfficiency),
  );
  const warn = b.map((r) =>
    r.baseline === null || t.bands === null ? null : 100 * r.baseline - t.bands.warning,
  );
  const alarm = b.map((r) =>
    r.baseline === null || t.bands === null ? null : 100 * r.baseline - t.bands.alarm,
  );
  if (powerUnit === undefined) {
    const peak = Math.max(0, ...b.map((r) => Math.abs(r.powerMean ?? 0)));
    powerUnit = peak >= 1e6 ? { div: 1e6, name: 'MW' } : { div: 1e3, name: 'kW' };
  }
  const effData = [x, eff, base, hi, lo, warn, alarm];
  const workData = [
    x,
    b.map((r) => (r.specificWorkMean === null ? null : r.specificWorkMean / 1000)),
    b.map((r) => (r.powerMean === null ? null : r.powerMean / powerUnit.div)),
  ];
  const results = b.reduce((s, r) => s + r.n, 0);
  const valid = b.reduce((s, r) => s + r.nValid, 0);
  const drawn = eff.filter((v) => v !== null).length;
  const note = document.getElementById('trend-note');
  note.textContent =
    `${results} results in this range, ${valid} valid; ${drawn} points drawn (buckets of ${t.bucketMs < 60_000 ? `${num(t.bucketMs / 1000, 0)} s` : `${num(t.bucketMs / 60000, 1)} min`}, mean of the valid results in each); ` +
    `band lines at baseline minus ${t.bands ? `${t.bands.warning} and ${t.bands.alarm}` : '–'} points; shaded: ±2 u.`;
  const empty = document.getElementById('trend-empty');
  empty.textContent =
    valid > 0
      ? ''
      : results > 0
        ? `No valid result in this range: all ${results} results are flagged (see the alerts above). Choose a longer range to see the last valid ones.`
        : 'No results in this range. Choose a longer range.';
  const chart = document.getElementById('eff-chart');
  chart.dataset.points = String(b.length);
  chart.dataset.validPoints = String(drawn);
  chart.dataset.from = t.from;
  chart.dataset.to = t.to;
  if (effPlot === undefined) {
    const zoomHook = { setSelect: [(u) => zoom(u, id, kind)] };
    effPlot = new uPlot(
      opts(
        kind === 'pump'
          ? 'Hydraulic efficiency [%]'
          : kind === 'fan'
            ? 'Fan efficiency [%]'
            : 'Isentropic efficiency [%]',
        [
          { label: 'efficiency %', stroke: '#1f2326', width: 1.5 },
          { label: 'baseline %', stroke: '#777', dash: [6, 4] },
          { label: '+2u', stroke: 'rgba(0,0,0,0)', points: { show: false } },
          { label: '−2u', stroke: 'rgba(0,0,0,0)', points: { show: false } },
          { label: 'warning', stroke: '#9a6700', dash: [2, 3] },
          { label: 'alarm', stroke: '#b3261e', dash: [2, 3] },
        ],
        width,
        { bands: [{ series: [3, 4], fill: 'rgba(60,60,60,0.12)' }], hooks: zoomHook },
      ),
      effData,
      chart,
    );
    workPlot = new uPlot(
      opts(
        `Specific work [kJ/kg] and power [${powerUnit.name}]`,
        [
          { label: 'specific work kJ/kg', stroke: '#1f2326', scale: 'w' },
          { label: `power ${powerUnit.name}`, stroke: '#777', scale: 'p' },
        ],
        width,
        {
          axes: [{ scale: 'w' }, { scale: 'p', side: 1, grid: { show: false } }],
          hooks: zoomHook,
        },
      ),
      workData,
      document.getElementById('work-chart'),
    );
  } else {
    effPlot.setData(effData);
    workPlot.setData(workData);
  }
  chart.dataset.loaded = 'true';
}

/** A drag selection asks the server for that range again, downsampled to the chart width. */
function zoom(u, id, kind) {
  if (u.select.width < 5) return;
  const from = u.posToVal(u.select.left, 'x') * 1000;
  const to = u.posToVal(u.select.left + u.select.width, 'x') * 1000;
  u.setSelect({ left: 0, top: 0, width: 0, height: 0 }, false);
  trend(id, kind, from, to);
}

function rangeFromSelect() {
  const days = Number(document.getElementById('range').value);
  const to = Date.now();
  return [to - days * DAY, to];
}

async function hs(id, kind) {
  const box = document.getElementById('hs-chart');
  const note = document.getElementById('hs-note');
  try {
    const c = await api(`/api/machines/${id}/hs-chart`);
    box.replaceChildren(hsChart(c));
    const sgen = c.entropyGeneration;
    const ageMs = Date.now() - Date.parse(c.time);
    const dp = c.outletIsobar.p - c.inletIsobar.p;
    const rise =
      kind === 'turbine' ? `pressure drop ${pressureText(-dp)}` : `pressure rise ${pressureText(dp)}`;
    note.textContent =
      `${c.fluid}, result of ${when(c.time)}${ageMs > DAY ? ` (${age(ageMs)} ago: the newest with a full state)` : ''}: ` +
      `inlet ${num(c.inletIsobar.p / 1e5, 3)} bar(a), outlet ${num(c.outletIsobar.p / 1e5, 3)} bar(a), ${rise}; ` +
      `efficiency ${pct(c.efficiency)} %; entropy generation s_out − s_in = ${num(sgen, 1)} J/(kg K)` +
      (c.uEntropyGeneration !== null ? ` (u = ${num(c.uEntropyGeneration, 1)})` : '') +
      '. Dashed vertical: ideal expansion or compression at the inlet entropy.';
    box.dataset.loaded = 'true';
    box.dataset.entropyGeneration = String(sgen);
  } catch (e) {
    box.replaceChildren(el('p', { class: 'sub', text: e.message }));
  }
}

async function main() {
  frame();
  let id;
  try {
    id = await resolveId();
  } catch (e) {
    document.getElementById('kpis').textContent = e.message;
    return;
  }
  let kind = 'turbine';
  try {
    kind = (await header(id)).machine.kind;
  } catch (e) {
    document.getElementById('kpis').textContent = e.message;
  }
  openAlerts(id).catch((e) => {
    document.getElementById('machine-alerts').textContent = e.message;
  });
  const show = (range) =>
    trend(id, kind, ...range).catch((e) => {
      document.getElementById('trend-note').textContent = e.message;
    });
  document.getElementById('range').addEventListener('change', () => show(rangeFromSelect()));
  document.getElementById('eff-chart').addEventListener('dblclick', () => show(rangeFromSelect()));
  let resizeTimer;
  window.addEventListener('resize', () => {
    clearTimeout(resizeTimer);
    resizeTimer = setTimeout(() => {
      const width = chartWidth();
      effPlot?.setSize({ width, height: 260 });
      workPlot?.setSize({ width, height: 260 });
    }, 200);
  });
  // ?from=...&to=... opens a fixed range (alert evidence links and the browser tests).
  const fixed = params.get('from') !== null && params.get('to') !== null;
  show(fixed ? [Date.parse(params.get('from')), Date.parse(params.get('to'))] : rangeFromSelect());
  hs(id, kind);
}

main();
