import { api, el, frame, when } from './common.js';

let next = '/api/quarantine?limit=100';

async function more() {
  if (next === null) return;
  const page = await api(next);
  const body = document.querySelector('#quarantine tbody');
  for (const q of page.items)
    body.append(
      el(
        'tr',
        { 'data-quarantine': q.id },
        el('td', { text: when(q.createdAt) }),
        el('td', { text: q.source }),
        el('td', { text: q.file ?? '–' }),
        el('td', { text: q.line ?? '–' }),
        el('td', { text: q.column ?? '–' }),
        el('td', { text: q.reason }),
        el('td', {}, el('code', { text: (q.raw ?? '').slice(0, 120) })),
      ),
    );
  next = page.next;
  document.getElementById('more').hidden = next === null;
  document.getElementById('quarantine').dataset.loaded = 'true';
}

document.getElementById('more').addEventListener('click', more);
frame();
more();
