// The h-s chart of one result (GET /api/machines/:id/hs-chart) as SVG, each state point's s and h in data attributes.

const SVG = 'http://www.w3.org/2000/svg';

function svg(tag, attrs) {
  const e = document.createElementNS(SVG, tag);
  for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, String(v));
  return e;
}

/** About `count` round tick values in [min, max] (steps of 1, 2 or 5 times a power of ten). */
export function ticks(min, max, count) {
  const raw = (max - min) / count;
  if (!(raw > 0)) return [];
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * mag).find((s) => s >= raw) ?? 10 * mag;
  const out = [];
  for (let v = Math.ceil(min / step) * step; v <= max + 1e-9 * step; v += step) out.push(v);
  return out;
}

/** Absolute pressure [Pa] for a point label: bar(a) with the digits a fan's small rise needs. */
function barA(p) {
  return `${(p / 1e5).toFixed(p < 2e5 ? 3 : 2)} bar(a)`;
}

export function hsChart(c) {
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
  // Width follows the panel (phones included); the viewBox keeps the geometry.
  const root = svg('svg', {
    viewBox: `0 0 ${W} ${H}`,
    width: '100%',
    preserveAspectRatio: 'xMinYMin meet',
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
  // Grid and tick labels in kJ/kg and kJ/(kg K).
  for (const h of ticks(hMin / 1000, hMax / 1000, 6)) {
    const y = Y(h * 1000);
    root.append(svg('line', { x1: pad.l, x2: W - pad.r, y1: y, y2: y, class: 'grid' }));
    label(pad.l - 6, y + 4, h.toFixed(0), 'end');
  }
  const sTicks = ticks(sMin / 1000, sMax / 1000, 5);
  const sDigits = Math.max(0, -Math.floor(Math.log10((sTicks[1] ?? 1) - (sTicks[0] ?? 0)) + 1e-9));
  for (const s of sTicks) {
    const x = X(s * 1000);
    root.append(svg('line', { x1: x, x2: x, y1: pad.t, y2: H - pad.b, class: 'grid' }));
    label(x, H - pad.b + 16, s.toFixed(sDigits));
  }
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
  const point = (p, cls, role, text) => {
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
    // Labels stay inside the frame: to the left of points in the right third.
    const right = cx > pad.l + (2 * (W - pad.l - pad.r)) / 3;
    label(cx + (right ? -8 : 8), cy - 6, text, right ? 'end' : 'start');
  };
  point(c.inlet, 'inlet', 'inlet', `inlet, ${barA(c.inletIsobar.p)}`);
  point(c.outletIsentropic, 'ideal-out', 'outlet-isentropic', 'ideal exit (s = s_in)');
  if (c.outlet) point(c.outlet, 'outlet', 'outlet', `real exit, ${barA(c.outletIsobar.p)}`);
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
  return root;
}
