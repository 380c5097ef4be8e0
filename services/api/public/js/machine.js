import uPlot from '/vendor/uplot/uPlot.esm.js';
import { api, el, frame, num, pct, power, signed, when } from './common.js';

const id = Number(new URLSearchParams(location.search).get('id'));
const DAY = 86_400_000;
const SVG = 'http://www.w3.org/2000/svg';

let effPlot;
let workPlot;
let loading = 0;

function kpi(label, value, field) {
  return el(
    'div',
    { 'data-field': field },
    el('div', { class: 'sub', text: label }),
    el('div', { class: 'figure', text: value }),
  );
}

/** Set by header(): which efficiency the trend shows depends on the machine kind. */
let machineKind = 'turbine';

async function header() {
  const [machine, fleet] = await Promise.all([api(`/api/machines/${id}`), api('/api/fleet')]);
  machineKind = machine.kind;
  const f = fleet.items.find((m) => m.id === id);
  document.getElementById('title').textContent = machine.name;
  document.title = `${machine.name} · Isentrope`;
  const c = f?.current ?? null;
  const k = document.getElementById('kpis');
  k.replaceChildren(
    kpi('Efficiency (last hour) %', pct(c?.efficiency), 'efficiency'),
    kpi('Baseline %', pct(c?.baseline), 'baseline'),
    kpi('Drift, points', signed(c?.driftPts), 'drift'),
    kpi('Power', power(c?.power), 'power'),
    el(
      'div',
      {},
      el('div', { class: 'sub', text: 'Band' }),
      el('div', { class: `figure`, text: f?.band ?? '–' }),
    ),
    el('div', {}, el('div', { class: 'sub', text: `as of ${when(c?.windowEnd)}` })),
  );
  if (f?.band === 'warning' || f?.band === 'alarm') k.classList.add(`state-${f.band}`);
}

function opts(title, series, width, extra = {}) {
  return {
    title,
    width,
    height: 260,
    series: [{}, ...series],
    cursor: { drag: { x: true, y: false } },
    scales: { x: { time: true } },
    legend: { live: true },
    ...extra,
  };
}

/** Fetch the trend for [from, to) at about one bucket per pixel and draw both charts. */
async function trend(fromMs, toMs) {
  const ticket = ++loading;
  const width = Math.max(320, document.getElementById('eff-chart').clientWidth - 10);
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
  const effData = [x, eff, base, hi, lo, warn, alarm];
  const workData = [
    x,
    b.map((r) => (r.specificWorkMean === null ? null : r.specificWorkMean / 1000)),
    b.map((r) => (r.powerMean === null ? null : r.powerMean / 1e6)),
  ];
  document.getElementById('trend-note').textContent =
    `${b.length} points (buckets of ${num(t.bucketMs / 60000, 1)} min, mean of the valid results in each); band lines at baseline minus ${t.bands ? `${t.bands.warning} and ${t.bands.alarm}` : '–'} points; shaded: ±2 u.`;
  document.getElementById('eff-chart').dataset.points = String(b.length);
  document.getElementById('eff-chart').dataset.from = t.from;
  document.getElementById('eff-chart').dataset.to = t.to;
  if (effPlot === undefined) {
    effPlot = new uPlot(
      opts(
        machineKind === 'pump'
          ? 'Hydraulic efficiency [%]'
          : machineKind === 'fan'
            ? 'Fan efficiency [%]'
            : 'Isentropic efficiency [%]',
        [
          { label: 'efficiency', stroke: '#1f2326', width: 1.5 },
          { label: 'baseline', stroke: '#777', dash: [6, 4] },
          { label: '+2u', stroke: 'rgba(0,0,0,0)', points: { show: false } },
          { label: '−2u', stroke: 'rgba(0,0,0,0)', points: { show: false } },
          { label: 'warning', stroke: '#9a6700', dash: [2, 3] },
          { label: 'alarm', stroke: '#b3261e', dash: [2, 3] },
        ],
        width,
        { bands: [{ series: [3, 4], fill: 'rgba(60,60,60,0.12)' }], hooks: { setSelect: [zoom] } },
      ),
      effData,
      document.getElementById('eff-chart'),
    );
    workPlot = new uPlot(
      opts(
        'Specific work [kJ/kg] and power [MW]',
        [
          { label: 'specific work kJ/kg', stroke: '#1f2326', scale: 'w' },
          { label: 'power MW', stroke: '#777', scale: 'p' },
        ],
        width,
        {
          axes: [{}, { scale: 'w' }, { scale: 'p', side: 1, grid: { show: false } }],
          hooks: { setSelect: [zoom] },
        },
      ),
      workData,
      document.getElementById('work-chart'),
    );
  } else {
    effPlot.setData(effData);
    workPlot.setData(workData);
  }
  document.getElementById('eff-chart').dataset.loaded = 'true';
}

/** A drag selection asks the server for that range again, downsampled to the chart width. */
function zoom(u) {
  if (u.select.width < 5) return;
  const from = u.posToVal(u.select.left, 'x') * 1000;
  const to = u.posToVal(u.select.left + u.select.width, 'x') * 1000;
  u.setSelect({ left: 0, top: 0, width: 0, height: 0 }, false);
  trend(from, to);
}

function rangeFromSelect() {
  const days = Number(document.getElementById('range').value);
  const to = Date.now();
  return [to - days * DAY, to];
}

// ---- h-s chart as SVG, with each state point's s and h in data attributes ----

function svg(tag, attrs) {
  const e = document.createElementNS(SVG, tag);
  for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, String(v));
  return e;
}

function hsChart(c) {
  const W = 640;
  const H = 420;
  const pad = { l: 64, r: 16, t: 16, b: 44 };
  const pts = [
    ...c.inletIsobar.points,
    ...c.outletIsobar.points,
    c.inlet,
    c.outletIsentropic,
    ...(c.outlet ? [c.outlet] : []),
  ];
  const sMin = Math.min(...pts.map((p) => p.s));
  const sMax = Math.max(...pts.map((p) => p.s));
  let hMin = Math.min(c.outletIsentropic.h, ...(c.outlet ? [c.outlet.h] : []), c.inlet.h);
  let hMax = Math.max(c.inlet.h, ...(c.outlet ? [c.outlet.h] : []));
  const dh = hMax - hMin || 1;
  hMin -= 0.25 * dh;
  hMax += 0.25 * dh;
  const X = (s) => pad.l + ((s - sMin) / (sMax - sMin)) * (W - pad.l - pad.r);
  const Y = (h) => pad.t + ((hMax - h) / (hMax - hMin)) * (H - pad.t - pad.b);
  const root = svg('svg', {
    width: W,
    height: H,
    viewBox: `0 0 ${W} ${H}`,
    role: 'img',
    'aria-label': 'h-s chart',
    'data-smin': sMin,
    'data-smax': sMax,
    'data-hmin': hMin,
    'data-hmax': hMax,
  });
  const clip = svg('clipPath', { id: 'plot-area' });
  clip.append(svg('rect', { x: pad.l, y: pad.t, width: W - pad.l - pad.r, height: H - pad.t - pad.b }));
  root.append(clip);
  const g = svg('g', { 'clip-path': 'url(#plot-area)' });
  const line = (points, cls, extra = {}) => {
    const d = points
      .map((p, i) => `${i === 0 ? 'M' : 'L'}${X(p.s).toFixed(1)},${Y(p.h).toFixed(1)}`)
      .join('');
    g.append(svg('path', { d, class: cls, ...extra }));
  };
  if (c.dome) line([...c.dome.liquid, ...[...c.dome.vapour].reverse()], 'dome', { 'data-role': 'dome' });
  line(c.inletIsobar.points, 'isobar', { 'data-role': 'inlet-isobar', 'data-p': c.inletIsobar.p });
  line(c.outletIsobar.points, 'isobar', { 'data-role': 'outlet-isobar', 'data-p': c.outletIsobar.p });
  line(c.isentropicPath, 'ideal', { 'data-role': 'isentropic-path' });
  if (c.actualPath.length > 0) line(c.actualPath, 'actual', { 'data-role': 'actual-path' });
  root.append(g);
  const point = (p, cls, role, label) => {
    const cx = X(p.s);
    const cy = Y(p.h);
    root.append(
      svg('circle', {
        cx: cx.toFixed(2),
        cy: cy.toFixed(2),
        r: 5,
        class: `pt ${cls}`,
        'data-role': role,
        'data-s': p.s,
        'data-h': p.h,
      }),
    );
    const t = svg('text', { x: cx + 8, y: cy - 6 });
    t.textContent = label;
    root.append(t);
  };
  point(c.inlet, 'inlet', 'inlet', 'inlet');
  point(c.outletIsentropic, 'ideal-out', 'outlet-isentropic', 'ideal exit (s = s_in)');
  if (c.outlet) point(c.outlet, 'outlet', 'outlet', 'real exit');
  const label = (x, y, text, anchor = 'middle', rotate = false) => {
    const t = svg('text', {
      x,
      y,
      'text-anchor': anchor,
      ...(rotate ? { transform: `rotate(-90 ${x} ${y})` } : {}),
    });
    t.textContent = text;
    root.append(t);
  };
  root.append(
    svg('rect', {
      x: pad.l,
      y: pad.t,
      width: W - pad.l - pad.r,
      height: H - pad.t - pad.b,
      fill: 'none',
      stroke: '#bbb',
    }),
  );
  label((pad.l + W - pad.r) / 2, H - 8, 'specific entropy s [kJ/(kg K)]');
  label(16, (pad.t + H - pad.b) / 2, 'specific enthalpy h [kJ/kg]', 'middle', true);
  label(pad.l, H - pad.b + 16, (sMin / 1000).toFixed(3), 'start');
  label(W - pad.r, H - pad.b + 16, (sMax / 1000).toFixed(3), 'end');
  label(pad.l - 6, pad.t + 10, (hMax / 1000).toFixed(0), 'end');
  label(pad.l - 6, H - pad.b, (hMin / 1000).toFixed(0), 'end');
  return root;
}

async function hs() {
  const box = document.getElementById('hs-chart');
  const note = document.getElementById('hs-note');
  try {
    const c = await api(`/api/machines/${id}/hs-chart`);
    box.replaceChildren(hsChart(c));
    const sgen = c.entropyGeneration;
    note.textContent =
      `${c.fluid}, result of ${when(c.time)}: inlet ${num(c.inletIsobar.p / 1e5, 2)} bar(a), outlet ${num(c.outletIsobar.p / 1e5, 2)} bar(a); ` +
      `efficiency ${pct(c.efficiency)} %; entropy generation s_out − s_in = ${num(sgen, 1)} J/(kg K)` +
      (c.uEntropyGeneration !== null ? ` (u = ${num(c.uEntropyGeneration, 1)})` : '') +
      '. Dashed vertical: ideal expansion or compression at the inlet entropy.';
    box.dataset.loaded = 'true';
    box.dataset.entropyGeneration = String(sgen);
  } catch (e) {
    box.replaceChildren(el('p', { class: 'sub', text: e.message }));
  }
}

document.getElementById('range').addEventListener('change', () => trend(...rangeFromSelect()));
document.getElementById('eff-chart').addEventListener('dblclick', () => trend(...rangeFromSelect()));
frame();
header().catch((e) => (document.getElementById('kpis').textContent = e.message));
const start = new URLSearchParams(location.search);
// ?from=...&to=... opens a fixed range (used by links and the browser tests).
const fixed = start.get('from') !== null && start.get('to') !== null;
trend(...(fixed ? [Date.parse(start.get('from')), Date.parse(start.get('to'))] : rangeFromSelect())).catch(
  (e) => {
    document.getElementById('trend-note').textContent = e.message;
  },
);
hs();
