import { api, el, frame, openAlertsText, pct, power, signed, when } from './common.js';

/** Which efficiency is trended per machine kind (see services/jobs compute: pumps and fans with a power tag use it). */
const EFFICIENCY_KIND = {
  turbine: 'isentropic',
  compressor: 'isentropic',
  pump: 'hydraulic',
  fan: 'fan (air power / shaft)',
};

const KIND = { turbine: 'steam turbine', compressor: 'compressor', pump: 'pump', fan: 'fan' };

/** Card class per state: colour only where something is wrong. */
const STATE_CLASS = {
  alarm: 'state-alarm',
  warning: 'state-warning',
  'no-data': 'state-stale',
  'out-of-service': 'state-stale',
};

function card(m) {
  const c = m.current;
  // The API sends the state (band, or why it says nothing about today); the page only shows it.
  const state = m.state;
  const health = m.health;
  const share =
    health.validShare === null
      ? 'no results in the last day'
      : `${Math.round(100 * health.validShare)} % valid of ${health.results} results in the last day`;
  const alerts = openAlertsText(m);
  return el(
    'a',
    {
      class: `card ${STATE_CLASS[state.key] ?? ''}`,
      href: `/machine.html?id=${m.id}`,
      'data-machine': m.id,
      'data-band': m.band,
      'data-state': state.key,
    },
    el(
      'div',
      { class: 'card-head' },
      el('div', { class: 'name', text: m.name }),
      el('span', { class: `tag ${state.key}`, 'data-field': 'state', text: state.label }),
    ),
    el('div', { class: 'kind', text: `${KIND[m.kind] ?? m.kind} · ${m.site}` }),
    el(
      'div',
      { class: 'figure', 'data-field': 'efficiency' },
      `${pct(c?.efficiency)} `,
      el('small', { text: `% ${EFFICIENCY_KIND[m.kind] ?? 'efficiency'}` }),
    ),
    el(
      'div',
      { class: 'sub', 'data-field': 'drift' },
      m.hasBaseline
        ? `${signed(c?.driftPts)} points against baseline ${pct(c?.baseline)} %`
        : 'no baseline yet',
    ),
    state.detail ? el('div', { class: 'sub stale-note', 'data-field': 'stale', text: state.detail }) : null,
    el('div', { class: 'sub', text: `power ${power(c?.power)}${c ? ` · as of ${when(c.windowEnd)}` : ''}` }),
    el('div', { class: 'sub', 'data-field': 'health', text: share }),
    alerts ? el('div', { class: 'sub alerts-note', 'data-field': 'alerts', text: alerts }) : null,
  );
}

async function load() {
  const grid = document.getElementById('fleet');
  try {
    const fleet = await api('/api/fleet');
    grid.replaceChildren(...fleet.items.map((m) => card(m)));
    if (fleet.items.length === 0)
      grid.replaceChildren(el('p', { class: 'sub', text: 'No machines configured yet.' }));
    grid.dataset.loaded = 'true';
  } catch (e) {
    grid.replaceChildren(el('p', { class: 'error', text: e.message }));
  }
}

frame();
load();
setInterval(load, 60_000);
