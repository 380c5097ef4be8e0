import { api, el, frame, when } from './common.js';

function lastMonth() {
  const d = new Date();
  d.setUTCDate(1);
  d.setUTCMonth(d.getUTCMonth() - 1);
  return d.toISOString().slice(0, 7);
}

async function load() {
  const page = await api('/api/exports?limit=50');
  const body = document.querySelector('#exports tbody');
  body.replaceChildren(
    ...page.items.map((x) =>
      el(
        'tr',
        { 'data-export': x.id },
        el('td', { text: when(x.createdAt) }),
        el('td', { text: x.month }),
        el('td', { class: 'sub', text: `${when(x.periodFrom)} – ${when(x.periodTo)}` }),
        el('td', { text: x.format }),
        el('td', { text: x.status + (x.error ? `: ${x.error}` : '') }),
        el('td', { text: x.sizeBytes === null ? '–' : `${(x.sizeBytes / 1024).toFixed(1)} kB` }),
        el('td', { text: x.createdBy }),
        el(
          'td',
          {},
          x.download
            ? el('a', { href: x.download, download: '', 'data-download': x.id, text: 'Download' })
            : null,
        ),
      ),
    ),
  );
  document.getElementById('exports').dataset.loaded = 'true';
}

/** Sites in more than one time zone: the report's zone is picked here (one zone: the sites' own). */
async function zones() {
  const sites = await api('/api/sites');
  const names = [...new Set(sites.items.map((s) => s.timeZone))].sort();
  const zone = document.getElementById('zone');
  zone.replaceChildren(...names.map((z) => el('option', { value: z, text: z })));
  document.getElementById('zone-pick').hidden = names.length < 2;
}

const month = document.getElementById('month');
month.value = lastMonth();
document.getElementById('make').addEventListener('click', async () => {
  const status = document.getElementById('make-status');
  status.textContent = 'making…';
  try {
    const x = await api('/api/exports', {
      method: 'POST',
      body: {
        month: month.value,
        format: document.getElementById('format').value,
        ...(document.getElementById('zone-pick').hidden
          ? {}
          : { timeZone: document.getElementById('zone').value }),
      },
    });
    status.textContent = `report ${x.id} ready`;
    await load();
  } catch (e) {
    status.textContent = e.message;
  }
});
frame();
load();
zones();
