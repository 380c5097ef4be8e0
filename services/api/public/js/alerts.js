import { api, el, frame, when } from './common.js';

const STATE = {
  active_unacknowledged: 'active, not acknowledged',
  active_acknowledged: 'active, acknowledged',
  returned_unacknowledged: 'returned, not acknowledged',
  shelved: 'shelved',
  suppressed: 'suppressed',
  out_of_service: 'out of service',
  normal: 'normal',
};

let me;

function actions(a) {
  const box = el('span');
  const canAct = me !== undefined && (me.role === 'engineer' || me.role === 'admin');
  const act = async (path, body) => {
    for (const b of box.querySelectorAll('button')) b.disabled = true;
    try {
      await api(`/api/alerts/${a.id}/${path}`, { method: 'POST', body });
      await load();
    } catch (e) {
      document.getElementById('alerts-error').textContent = e.message;
      for (const b of box.querySelectorAll('button')) b.disabled = false;
    }
  };
  if (a.state === 'active_unacknowledged' || a.state === 'returned_unacknowledged')
    box.append(
      el('button', {
        text: 'Acknowledge',
        'data-action': 'acknowledge',
        disabled: !canAct,
        onclick: () => act('acknowledge', {}),
      }),
    );
  if (a.state === 'shelved')
    box.append(
      el('button', {
        text: 'Unshelve',
        'data-action': 'unshelve',
        disabled: !canAct,
        onclick: () => act('unshelve', {}),
      }),
    );
  else if (a.state !== 'out_of_service')
    box.append(
      ' ',
      el('button', {
        text: 'Shelve 8 h',
        'data-action': 'shelve',
        disabled: !canAct,
        onclick: () => act('shelve', { hours: 8 }),
      }),
    );
  return box;
}

function row(a) {
  const levelTag = a.category === 'instrument' ? 'fault' : a.level;
  return el(
    'tr',
    { 'data-alert': a.id, 'data-state': a.state },
    el('td', { text: when(a.raisedAt) }),
    el('td', {}, el('a', { href: `/machine.html?id=${a.machineId}`, text: a.machineName })),
    el(
      'td',
      {},
      el('span', { class: `tag ${levelTag}`, text: a.category === 'instrument' ? 'instrument' : 'drift' }),
    ),
    el('td', {}, el('span', { class: `tag ${a.level}`, text: a.level })),
    el('td', { 'data-field': 'state', text: STATE[a.state] ?? a.state }),
    el('td', { text: a.message }),
    el('td', {}, actions(a)),
  );
}

async function load() {
  const body = document.querySelector('#alerts tbody');
  const page = await api('/api/alerts?status=open&limit=200');
  body.replaceChildren(...page.items.map(row));
  if (page.items.length === 0)
    body.replaceChildren(el('tr', {}, el('td', { colspan: 7, class: 'sub', text: 'No open alerts.' })));
  document.getElementById('alerts').dataset.loaded = 'true';
}

me = await frame();
await load();
