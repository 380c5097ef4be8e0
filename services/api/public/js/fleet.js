import { api, el, frame, pct, power, signed, when } from './common.js';

/** Which efficiency is trended per machine kind (see services/jobs compute: pumps and fans with a power tag use it). */
const EFFICIENCY_KIND = {
  turbine: 'isentropic',
  compressor: 'isentropic',
  pump: 'hydraulic',
  fan: 'fan (air power / shaft)',
};

const KIND = { turbine: 'steam turbine', compressor: 'compressor', pump: 'pump', fan: 'fan' };

function card(m) {
  const c = m.current;
  const stateClass = m.band === 'warning' ? 'state-warning' : m.band === 'alarm' ? 'state-alarm' : '';
  const health = m.health;
  const share =
    health.validShare === null
      ? 'no results in the last day'
      : `${Math.round(100 * health.validShare)} % valid of ${health.results} results in the last day`;
  const stale = m.outOfService
    ? 'out of service'
    : c === null
      ? 'no valid result yet'
      : `as of ${when(c.windowEnd)}`;
  return el(
    'a',
    {
      class: `card ${stateClass}`,
      href: `/machine.html?id=${m.id}`,
      'data-machine': m.id,
      'data-band': m.band,
    },
    el('div', { class: 'name', text: m.name }),
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
      m.band === 'warning' || m.band === 'alarm'
        ? el('span', { class: `tag ${m.band}`, text: m.band, style: 'margin-left:.4rem' })
        : null,
    ),
    el('div', { class: 'sub', text: `power ${power(c?.power)} · ${stale}` }),
    el('div', { class: 'sub', 'data-field': 'health', text: share }),
    m.openAlerts > 0
      ? el('div', { class: 'sub', text: `${m.openAlerts} open alert${m.openAlerts > 1 ? 's' : ''}` })
      : null,
  );
}

async function load() {
  const grid = document.getElementById('fleet');
  try {
    const fleet = await api('/api/fleet');
    grid.replaceChildren(...fleet.items.map(card));
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
