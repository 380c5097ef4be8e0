import { Readable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { tagLookupFrom } from '../types.js';
import { csvFormatSchema } from './format.js';
import { type ParseCsvOptions, parseCsv, parseValue, type QuarantineEntry } from './parse.js';

const tags = tagLookupFrom([
  { id: 1, name: 'ST1.PI-100', unit: 'bara' },
  { id: 2, name: 'ST1.TI-100', unit: 'degC' },
]);

async function run(
  text: string,
  format: Parameters<typeof csvFormatSchema.parse>[0],
  options: ParseCsvOptions = {},
) {
  const samples: [number, string, number, number][] = [];
  const quarantine: QuarantineEntry[] = [];
  const summary = await parseCsv(
    Readable.from([Buffer.from(text)]),
    csvFormatSchema.parse(format),
    tags,
    {
      samples: async (b) => {
        for (const s of b) samples.push([s.tagId, s.time.toISOString(), s.value, s.quality]);
      },
      quarantine: async (e) => {
        quarantine.push(...e);
      },
    },
    options,
  );
  return { samples, quarantine, summary };
}

// Expected instants worked by hand from each text and zone (common practice, no source).
describe('parseCsv', () => {
  it('maps header aliases to tags and reads US 12-hour times in a US zone', async () => {
    const r = await run('Timestamp,PT100 Inlet,TT100\r\n03/29/2026 02:30:00 PM,42.5,510\r\n', {
      aliases: { 'PT100 Inlet': 'ST1.PI-100', TT100: 'ST1.TI-100' },
      timeZone: 'America/New_York',
    });
    expect(r.summary.timeFormat).toBe('mdy12');
    // 14:30 EDT (UTC-4 after 8 March 2026, Energy Policy Act of 2005) is 18:30Z.
    expect(r.samples).toEqual([
      [1, '2026-03-29T18:30:00.000Z', 42.5, 192],
      [2, '2026-03-29T18:30:00.000Z', 510, 192],
    ]);
    expect(r.quarantine).toEqual([]);
  });

  it('reads epoch milliseconds in long files and can quarantine the repeated hour', async () => {
    const long = await run('tag,time,value\nST1.PI-100,1772359200000,1\n', { layout: 'long' });
    expect(long.samples).toEqual([[1, '2026-03-01T10:00:00.000Z', 1, 192]]);
    const fold = await run('time,ST1.PI-100\n2026-10-25 02:30:00,1\n2026-10-25 03:30:00,2\n', {
      timeZone: 'Europe/Berlin',
      ambiguousTime: 'quarantine',
    });
    expect(fold.quarantine.map((q) => [q.line, q.code])).toEqual([[2, 'ambiguous-time']]);
    // 03:30 CET (UTC+1) is 02:30Z (EU rule, Directive 2000/84/EC).
    expect(fold.samples).toEqual([[1, '2026-10-25T02:30:00.000Z', 2, 192]]);
  });

  it('parses values strictly', () => {
    expect(parseValue('1.5e3', false)).toEqual({ ok: true, value: 1500 });
    expect(parseValue('12,5', true)).toEqual({ ok: true, value: 12.5 });
    expect(parseValue('1.234,5', true)).toMatchObject({ ok: false, code: 'bad-value' });
    expect(parseValue('-Inf', false)).toMatchObject({ ok: false, code: 'non-finite-value' });
    expect(parseValue('12 bar', false)).toMatchObject({ ok: false, code: 'bad-value' });
    // Finite doubles too large to sum in a store bucket (values.ts) are refused; 1e200 itself is kept.
    expect(parseValue('1.5e308', false)).toMatchObject({ ok: false, code: 'value-too-large' });
    expect(parseValue('-1e201', false)).toMatchObject({ ok: false, code: 'value-too-large' });
    expect(parseValue('1e200', false)).toEqual({ ok: true, value: 1e200 });
  });

  it('names a delimiter mismatch when the header is one column', async () => {
    await expect(run('time;ST1.PI-100\n2026-01-01T00:00:00Z;1\n', {})).rejects.toThrow(
      'the header has no tag columns; it holds ";" but this source splits on ",": set the source\'s delimiter',
    );
  });

  it('notes a file with a header and no data rows once, at the header line', async () => {
    const r = await run('\ufefftime,ST1.PI-100\r\n\r\n', {});
    expect(r.samples).toEqual([]);
    expect(r.summary).toMatchObject({ rows: 0, samples: 0, quarantined: 1 });
    expect(r.quarantine.map((q) => [q.line, q.column, q.code, q.raw])).toEqual([
      [1, null, 'no-data', 'time,ST1.PI-100'],
    ]);
  });

  // Issue 18 item 12: CR-only files lost every row ("unknown-tag: column '0.5'").
  it('reads a CR-only file like an LF one', async () => {
    const text = 'time,ST1.PI-100,ST1.TI-100\r2026-01-01T00:00:00Z,0.5,510\r2026-01-01T00:00:01Z,0.6,511\r';
    const cr = await run(text, {});
    expect(cr.quarantine).toEqual([]);
    expect(cr.samples).toEqual((await run(text.replaceAll('\r', '\n'), {})).samples);
    expect(cr.samples).toHaveLength(4);
  });

  // Issue 18 item 13: "90" of a line still being written ("90.4") was stored.
  it('quarantines a last line without a line end when told the file may be incomplete', async () => {
    const text = 'time,ST1.PI-100\n2026-01-01T00:00:00Z,89.9\n2026-01-01T00:00:01Z,90';
    const held = await run(text, {}, { lastLineMayBeCut: true });
    expect(held.samples).toEqual([[1, '2026-01-01T00:00:00.000Z', 89.9, 192]]);
    expect(held.quarantine.map((q) => [q.line, q.code, q.raw])).toEqual([
      [3, 'incomplete-line', '2026-01-01T00:00:01Z,90'],
    ]);
    const complete = await run(text, {});
    expect(complete.samples.map((s) => s[2])).toEqual([89.9, 90]);
    const terminated = await run(`${text}\n`, {}, { lastLineMayBeCut: true });
    expect(terminated.samples.map((s) => s[2])).toEqual([89.9, 90]);
  });

  // Issue 18 item 15: 20,000 unknown columns wrote 20,000 quarantine rows per file.
  it('reports the unknown columns of a wide file once per file, and the unknown tags of a long file once', async () => {
    const unknown = Array.from({ length: 30 }, (_, i) => `XX.U${i}`);
    let text = `time,ST1.PI-100,${unknown.join(',')}\n`;
    for (let r = 0; r < 5; r++) text += `2026-01-01T00:00:0${r}Z,1,${unknown.map(() => '2').join(',')}\n`;
    const wide = await run(text, {});
    expect(wide.samples).toHaveLength(5);
    expect(wide.summary.skippedCells).toBe(150);
    expect(wide.quarantine.map((q) => [q.line, q.code])).toEqual([[1, 'unknown-tag']]);
    expect(wide.quarantine[0]!.reason).toContain('30 columns');
    expect(wide.quarantine[0]!.reason).toContain('"XX.U0"');
    const long = await run(
      'tag,time,value\nA.X,2026-01-01T00:00:00Z,1\nB.X,2026-01-01T00:00:00Z,1\nA.X,2026-01-01T00:00:01Z,1\n',
      {
        layout: 'long',
      },
    );
    expect(long.quarantine.map((q) => [q.line, q.code])).toEqual([[2, 'unknown-tag']]);
    expect(long.quarantine[0]!.reason).toContain('"A.X" (2 rows, the first at line 2)');
    expect(long.quarantine[0]!.reason).toContain('"B.X" (1 row, the first at line 3)');
  });
});
