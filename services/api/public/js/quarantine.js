import { api, el, frame, when } from './common.js';

let next = '/api/quarantine?limit=100';

/** The file's own name, the whole path on hover. */
function fileCell(path) {
  if (path === null || path === undefined) return el('td', { 'data-label': 'File', text: '–' });
  return el('td', { 'data-label': 'File', title: path, text: path.split('/').pop() });
}

async function more() {
  if (next === null) return;
  const page = await api(next);
  const body = document.querySelector('#quarantine tbody');
  for (const q of page.items)
    body.append(
      el(
        'tr',
        { 'data-quarantine': q.id },
        el('td', { 'data-label': 'Received', text: when(q.createdAt) }),
        el('td', { 'data-label': 'Source', text: q.source }),
        fileCell(q.file),
        el('td', { 'data-label': 'Line', text: q.line ?? '–' }),
        el('td', { 'data-label': 'Column', text: q.column ?? '–' }),
        el('td', { 'data-label': 'Reason', text: q.reason }),
        el('td', { 'data-label': 'Raw' }, el('code', { text: (q.raw ?? '').slice(0, 120) })),
      ),
    );
  if (body.children.length === 0)
    body.append(
      el(
        'tr',
        {},
        el('td', {
          colspan: 7,
          class: 'sub',
          text: 'Nothing in quarantine: every row received so far was stored.',
        }),
      ),
    );
  next = page.next;
  document.getElementById('more').hidden = next === null;
  document.getElementById('quarantine').dataset.loaded = 'true';
}

document.getElementById('more').addEventListener('click', more);
frame();
more();
