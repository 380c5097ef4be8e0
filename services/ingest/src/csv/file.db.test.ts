import { cp, mkdtemp, readdir, readFile, rm, utimes, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import { loadTagLookup } from '../tags.js';
import { seedTags } from '../testing/seed.js';
import type { TagLookup } from '../types.js';
import { ingestCsvFile } from './file.js';
import type { CsvFormatInput } from './format.js';

const CORPUS = join(import.meta.dirname, '../../test-data/bad-csv');

let db: TestDatabase;
let dir: string;
let tags: TagLookup;
let ids: Map<string, number>;

beforeAll(async () => {
  db = await createTestDatabase();
  ids = await seedTags(db.pool);
  tags = await loadTagLookup(db.pool, 'demo');
  dir = await mkdtemp(join(tmpdir(), 'ingest-csv-'));
  await cp(CORPUS, dir, { recursive: true });
});

afterAll(async () => {
  await db?.drop();
  if (dir !== undefined) await rm(dir, { recursive: true, force: true });
});

async function ingest(name: string, format: CsvFormatInput = {}) {
  return ingestCsvFile(join(dir, name), { pool: db.pool, source: 'drop', tags, format });
}

async function quarantineOf(fileId: number) {
  const r = await db.pool.query<{
    line: number | null;
    column_name: string | null;
    reason: string;
    raw: string | null;
  }>('SELECT line, column_name, reason, raw FROM quarantine WHERE file_id = $1 ORDER BY id', [fileId]);
  return r.rows;
}

async function samplesOf(tag: string) {
  const r = await db.pool.query<{ time: Date; value: number; quality: number }>(
    'SELECT time, value, quality FROM samples WHERE tag_id = $1 ORDER BY time',
    [ids.get(tag)],
  );
  return r.rows;
}

async function clear() {
  await db.pool.query('DELETE FROM samples');
}

// Expected values below are read off the hand-written corpus files (common practice, no source).
describe('CSV corpus of bad files: no crash, every bad row named', () => {
  it('broken quoting: good rows stored, the two broken rows quarantined by line', async () => {
    await clear();
    const r = await ingest('broken-quoting.csv');
    expect(r.status).toBe('done');
    if (r.status !== 'done') return;
    expect(r.summary.samples).toBe(4);
    const q = await quarantineOf(r.fileId);
    expect(q.map((e) => [e.line, e.reason.split(':')[0]])).toEqual([
      [3, 'csv-syntax'],
      [4, 'csv-syntax'],
    ]);
    expect(q[0]!.raw).toBe('2026-01-10 10:01:00,"42.2,510.6');
    expect(r.movedTo).toBe(join(dir, 'processed', 'broken-quoting.csv'));
  });

  it('a row with Latin-1 bytes is quarantined; a Latin-1 header or UTF-16 rejects the file with a reason file', async () => {
    const r = await ingest('latin1-row.csv');
    expect(r.status).toBe('done');
    if (r.status !== 'done') return;
    expect(r.summary.samples).toBe(4);
    expect((await quarantineOf(r.fileId)).map((e) => [e.line, e.reason.split(':')[0]])).toEqual([
      [3, 'invalid-utf8'],
    ]);
    for (const name of ['latin1-header.csv', 'utf16.csv']) {
      const bad = await ingest(name);
      expect(bad.status, name).toBe('rejected');
      const reason = await readFile(join(dir, 'rejected', `${name}.reason.txt`), 'utf8');
      expect(reason).toContain('UTF-8');
      // Shown in quarantine too, naming the header line that could not be read.
      expect(
        (await quarantineOf(bad.fileId)).map((q) => [q.line, q.reason.split(':')[0]]),
        name,
      ).toEqual([[1, 'file-rejected']]);
    }
    const rec = await db.pool.query('SELECT status, error FROM ingested_files WHERE path = $1', [
      join(dir, 'utf16.csv'),
    ]);
    expect(rec.rows[0]).toMatchObject({ status: 'failed' });
  });

  it('NaN, Infinity, #N/A and overflow are quarantined per cell; empty cells are no sample and no error', async () => {
    await clear();
    const r = await ingest('nan-infinity.csv');
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    const q = await quarantineOf(r.fileId);
    expect(q.map((e) => [e.line, e.column_name, e.reason.split(':')[0]])).toEqual([
      [2, 'ST1.PI-100', 'non-finite-value'],
      [3, 'ST1.PI-100', 'non-finite-value'],
      [3, 'ST1.TI-100', 'non-finite-value'],
      [4, 'ST1.PI-100', 'non-finite-value'],
      [4, 'ST1.TI-100', 'non-finite-value'],
      [6, 'ST1.TI-100', 'bad-value'],
    ]);
    expect((await samplesOf('ST1.PI-100')).map((s) => s.value)).toEqual([42.4]);
    expect((await samplesOf('ST1.TI-100')).map((s) => s.value)).toEqual([510.5, 510.8]);
  });

  it('empty files are rejected and say so in quarantine; a header-only file is done, nothing stored, and noted', async () => {
    const e = await ingest('empty.csv');
    expect(e.status).toBe('rejected');
    expect((await quarantineOf(e.fileId)).map((q) => [q.line, q.column_name, q.reason])).toEqual([
      [
        null,
        null,
        `file-rejected: ${join(dir, 'empty.csv')}: the file is empty; nothing stored, moved to ${join(dir, 'rejected', 'empty.csv')}`,
      ],
    ]);
    // bom-only.csv: distinct bytes from empty.csv, so a distinct checksum.
    const b = await ingest('bom-only.csv');
    expect(b.status).toBe('rejected');
    expect((await quarantineOf(b.fileId)).map((q) => q.reason.split(':')[0])).toEqual(['file-rejected']);
    const h = await ingest('header-only.csv');
    expect(h.status === 'done' && h.summary.samples === 0).toBe(true);
    expect((await quarantineOf(h.fileId)).map((q) => [q.line, q.reason.split(':')[0], q.raw])).toEqual([
      [1, 'no-data', 'time,ST1.PI-100,ST1.TI-100'],
    ]);
  });

  it('each drop of the same refused content leaves its own quarantine entry naming its file', async () => {
    await writeFile(join(dir, 'again-1.csv'), '');
    await writeFile(join(dir, 'again-2.csv'), '');
    const first = await ingest('again-1.csv');
    const second = await ingest('again-2.csv');
    expect([first.status, second.status]).toEqual(['rejected', 'rejected']);
    // One ingested_files record per content (the checksum is unique), one entry per drop.
    expect(second.fileId).toBe(first.fileId);
    // empty.csv (the test before) has this content too: its entry stays, and one more per drop.
    const all = (await quarantineOf(first.fileId)).map((q) => q.reason);
    expect(all).toHaveLength(3);
    const reasons = all.filter((r) => r.includes('again-'));
    expect(reasons).toHaveLength(2);
    expect(reasons[0]).toContain(join(dir, 'again-1.csv'));
    expect(reasons[1]).toContain(join(dir, 'again-2.csv'));
    expect(reasons.every((r) => r.startsWith('file-rejected: ') && r.includes('the file is empty'))).toBe(
      true,
    );
  });

  it('values beyond the storable magnitude are quarantined; the rows beside them are stored, the file is done', async () => {
    await clear();
    // Two 1.5e308 in one minute would overflow the minute rollup's float8 sum (largest double about 1.8e308, IEEE 754).
    await writeFile(
      join(dir, 'huge.csv'),
      'time,ST1.PI-100,ST1.TI-100\n2026-01-10 10:00:05,1.5e308,510.1\n2026-01-10 10:00:15,1.5e308,510.2\n2026-01-10 10:00:25,1e23,510.3\n',
    );
    const r = await ingest('huge.csv');
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    expect(
      (await quarantineOf(r.fileId)).map((q) => [q.line, q.column_name, q.reason.split(':')[0]]),
    ).toEqual([
      [2, 'ST1.PI-100', 'value-too-large'],
      [3, 'ST1.PI-100', 'value-too-large'],
    ]);
    // 1e23 is absurd for a pressure but storable: raw samples are kept as received, the compute job's range check judges them.
    expect((await samplesOf('ST1.PI-100')).map((s) => s.value)).toEqual([1e23]);
    expect((await samplesOf('ST1.TI-100')).map((s) => s.value)).toEqual([510.1, 510.2, 510.3]);
  });

  it('a very long line is quarantined without holding it', async () => {
    const path = join(dir, 'long-line.csv');
    await writeFile(
      path,
      `time,ST1.PI-100\n2026-01-10 10:00:00,1\n2026-01-10 10:01:00,${'9'.repeat(3_000_000)}\n2026-01-10 10:02:00,3\n`,
    );
    const r = await ingest('long-line.csv');
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    expect(r.summary.samples).toBe(2);
    const q = await quarantineOf(r.fileId);
    expect(q).toHaveLength(1);
    expect(q[0]).toMatchObject({ line: 3 });
    // 20 bytes of time and comma + 3,000,000 digits (counted, common practice, no source).
    expect(q[0]!.reason).toMatch(/^line-too-long: 3000020 bytes/);
    expect(q[0]!.raw!.length).toBeLessThan(300);
  });

  it('unknown tags are quarantined once per file (wide: naming the columns; long: each tag with its row count)', async () => {
    // The earlier tests stored other values at these times: a conflict now, so start clean.
    await clear();
    const w = await ingest('unknown-tags-wide.csv');
    if (w.status !== 'done') throw new Error(`status ${w.status}`);
    expect(w.summary.samples).toBe(6);
    expect(w.summary.skippedCells).toBe(3);
    const qw = await quarantineOf(w.fileId);
    expect(qw.map((e) => [e.line, e.column_name, e.reason.split(':')[0]])).toEqual([
      [1, 'XX.UNKNOWN', 'unknown-tag'],
    ]);

    await clear();
    const l = await ingest('unknown-tags-long.csv', { layout: 'long' });
    if (l.status !== 'done') throw new Error(`status ${l.status}`);
    const ql = await quarantineOf(l.fileId);
    expect(ql.map((e) => [e.line, e.reason.split(':')[0]])).toEqual([
      [7, 'bad-quality'],
      [3, 'unknown-tag'],
    ]);
    expect(ql[1]!.reason).toContain('3 row(s) skipped');
    // "good" -> 192 and "64" kept as received (OPC DA quality codes, see QUALITY).
    expect((await samplesOf('ST1.PI-100')).map((s) => [s.value, s.quality])).toEqual([
      [42.1, 192],
      [42.2, 64],
    ]);
  });

  it('a units row that disagrees with the tag quarantines that column once; decimal comma and ";"', async () => {
    await clear();
    const r = await ingest('bad-units.csv', { delimiter: ';', decimalComma: true, unitsRow: true });
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    const q = await quarantineOf(r.fileId);
    expect(q.map((e) => [e.line, e.column_name, e.reason.split(':')[0]])).toEqual([
      [2, 'ST1.TI-100', 'unit-mismatch'],
      [4, 'ST1.FI-100', 'bad-value'],
    ]);
    expect((await samplesOf('ST1.PI-100')).map((s) => s.value)).toEqual([42.1, 42.2]);
    expect((await samplesOf('ST1.FI-100')).map((s) => s.value)).toEqual([120]);
    expect(await samplesOf('ST1.TI-100')).toEqual([]);
  });

  it('daylight saving in Europe/Berlin: the skipped hour quarantined, the repeated hour resolved by order', async () => {
    await clear();
    const r = await ingest('dst-berlin.csv', { timeZone: 'Europe/Berlin' });
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    const q = await quarantineOf(r.fileId);
    expect(q.map((e) => [e.line, e.reason.split(':')[0]])).toEqual([
      [3, 'time-in-dst-gap'],
      [4, 'time-in-dst-gap'],
    ]);
    // EU rule (Directive 2000/84/EC): CET+1 / CEST+2, changes at 01:00 UTC on 29 March and 25 October 2026.
    const got = (await samplesOf('ST1.PI-100')).map((s) => [s.value, s.time.toISOString()]);
    expect(got).toEqual([
      [1, '2026-03-29T00:30:00.000Z'],
      [4, '2026-03-29T01:00:00.000Z'],
      [5, '2026-10-24T23:30:00.000Z'],
      [6, '2026-10-25T00:00:00.000Z'],
      [7, '2026-10-25T00:30:00.000Z'],
      [8, '2026-10-25T01:00:00.000Z'],
      [9, '2026-10-25T01:30:00.000Z'],
      [10, '2026-10-25T02:00:00.000Z'],
    ]);
  });

  it('duplicated headers: a repeated tag column is quarantined once (wide); a long file with two value columns is rejected', async () => {
    await clear();
    const w = await ingest('duplicated-headers-wide.csv');
    if (w.status !== 'done') throw new Error(`status ${w.status}`);
    expect(
      (await quarantineOf(w.fileId)).map((e) => [e.line, e.column_name, e.reason.split(':')[0]]),
    ).toEqual([[1, 'ST1.PI-100', 'duplicate-column']]);
    expect((await samplesOf('ST1.PI-100')).map((s) => s.value)).toEqual([42.1, 42.2]);
    const l = await ingest('duplicated-headers-long.csv', { layout: 'long' });
    expect(l.status).toBe('rejected');
  });

  it('column count, unreadable time and a time in another format are quarantined by line', async () => {
    await clear();
    const r = await ingest('bad-rows.csv');
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    expect(r.summary.timeFormat).toBe('iso');
    expect((await quarantineOf(r.fileId)).map((e) => [e.line, e.reason.split(':')[0]])).toEqual([
      [3, 'column-count'],
      [4, 'column-count'],
      [5, 'bad-time'],
      [7, 'bad-time'],
    ]);
    expect(r.summary.samples).toBe(4);
  });

  it('the same bytes dropped again are not ingested again', async () => {
    const again = join(dir, 'again.csv');
    await cp(join(dir, 'processed', 'broken-quoting.csv'), again);
    const r = await ingest('again.csv');
    expect(r.status).toBe('duplicate');
    const files = await readdir(join(dir, 'processed'));
    expect(files.some((f) => f.startsWith('again.csv'))).toBe(true);
    // Seen in quarantine under the first file, naming the one dropped again.
    const q = await quarantineOf(r.fileId);
    expect(q.at(-1)!.reason).toMatch(
      new RegExp(`^duplicate-file: ${join(dir, 'again.csv').replaceAll('.', '\\.')} has the same content`),
    );
  });
});

async function fileRecord(fileId: number) {
  const r = await db.pool.query<Record<string, number | string | null>>(
    `SELECT status, rows_total, rows_stored, rows_duplicate, rows_conflicting, rows_quarantined
       FROM ingested_files WHERE id = $1`,
    [fileId],
  );
  return r.rows[0];
}

// Issue 18 item 14: a corrected file ended 'done', rows_stored = every row, nothing quarantined, nothing changed.
// Counts below are by construction of the invented files (common practice, no source).
describe('corrected and re-sent files: the first stored value is kept', () => {
  const original =
    'time,ST1.PI-100,ST1.TI-100\n2026-04-01T00:00:00Z,1.5,500\n2026-04-01T00:00:01Z,2.5,501\n2026-04-01T00:00:02Z,3.5,502\n';

  it('refuses each corrected row with conflicting-value (line, tag, kept and refused value) and counts only rows written', async () => {
    await clear();
    await writeFile(join(dir, 'orig.csv'), original);
    const first = await ingest('orig.csv');
    if (first.status !== 'done') throw new Error(`status ${first.status}`);
    expect(await fileRecord(first.fileId)).toMatchObject({
      rows_stored: 6,
      rows_duplicate: 0,
      rows_conflicting: 0,
    });

    // Same times; line 3 has a new pressure, line 4 a new temperature.
    const corrected = original.replace(',2.5,501', ',2.6,501').replace(',3.5,502', ',3.5,503');
    await writeFile(join(dir, 'corrected.csv'), corrected);
    const r = await ingest('corrected.csv');
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    expect(r.written).toEqual({ stored: 0, duplicates: 4, conflicts: 2 });
    expect(await fileRecord(r.fileId)).toMatchObject({
      status: 'done',
      rows_total: 3,
      rows_stored: 0,
      rows_duplicate: 4,
      rows_conflicting: 2,
      rows_quarantined: 2,
    });
    const q = await quarantineOf(r.fileId);
    expect(q.map((e) => [e.line, e.column_name, e.reason.split(':')[0]])).toEqual([
      [3, 'ST1.PI-100', 'conflicting-value'],
      [4, 'ST1.TI-100', 'conflicting-value'],
    ]);
    expect(q[0]!.reason).toContain('already holds 2.5');
    expect(q[0]!.reason).toContain("this file's 2.6 is not stored");
    expect((await samplesOf('ST1.PI-100')).map((s) => s.value)).toEqual([1.5, 2.5, 3.5]);
    expect((await samplesOf('ST1.TI-100')).map((s) => s.value)).toEqual([500, 501, 502]);
  });

  it('a CRLF copy of a stored file reports 0 stored and every row a duplicate', async () => {
    await writeFile(join(dir, 'orig-crlf.csv'), original.replaceAll('\n', '\r\n'));
    const r = await ingest('orig-crlf.csv');
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    expect(r.written).toEqual({ stored: 0, duplicates: 6, conflicts: 0 });
    expect(await fileRecord(r.fileId)).toMatchObject({
      rows_stored: 0,
      rows_duplicate: 6,
      rows_quarantined: 0,
    });
  });
});

// Issue 18 item 13: a last line cut off without a newline was stored short (90 for 90.4).
describe('a file that may still be being written', () => {
  it('quarantines a last line without a line end when the file changed within the settling time, and reads it once settled', async () => {
    await clear();
    const text = 'time,ST1.PI-100\n2026-05-01T00:00:00Z,89.9\n2026-05-01T00:00:01Z,90';
    await writeFile(join(dir, 'cut.csv'), text);
    const r = await ingest('cut.csv');
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    expect((await samplesOf('ST1.PI-100')).map((s) => s.value)).toEqual([89.9]);
    expect((await quarantineOf(r.fileId)).map((e) => [e.line, e.reason.split(':')[0], e.raw])).toEqual([
      [3, 'incomplete-line', '2026-05-01T00:00:01Z,90'],
    ]);
    // The same bytes, unchanged for longer than settleMs, are taken as complete.
    const old = join(dir, 'settled.csv');
    await writeFile(old, text.replace('90', '91'));
    const past = new Date(Date.now() - 10 * 60_000);
    await utimes(old, past, past);
    const s = await ingest('settled.csv');
    if (s.status !== 'done') throw new Error(`status ${s.status}`);
    expect((await samplesOf('ST1.PI-100')).map((x) => x.value)).toEqual([89.9, 91]);
  });
});

// Issue 18 item 8 for CSV: one absurd time failed the whole file (the store refused the batch's span), retried for ever.
describe('CSV times outside the plausibility window', () => {
  it('quarantines year 9999 and 0001 rows and stores the rest, 1970 beside 2026 included', async () => {
    await clear();
    await writeFile(
      join(dir, 'absurd.csv'),
      'time,ST1.PI-100\n2026-06-01T00:00:00Z,1\n9999-12-31T00:00:00Z,2\n0001-01-01T00:00:00Z,3\n1970-01-02T00:00:00Z,4\n',
    );
    const r = await ingest('absurd.csv');
    if (r.status !== 'done') throw new Error(`status ${r.status}`);
    expect((await quarantineOf(r.fileId)).map((e) => [e.line, e.reason.split(':')[0]])).toEqual([
      [3, 'time-out-of-range'],
      [4, 'time-out-of-range'],
    ]);
    expect((await samplesOf('ST1.PI-100')).map((x) => x.value)).toEqual([4, 1]);
  });
});
