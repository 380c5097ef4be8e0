import { Readable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { type Line, readLines, splitCsvLine } from './lines.js';

async function collect(chunks: (string | Buffer)[], max = 1000): Promise<Line[]> {
  const out: Line[] = [];
  for await (const l of readLines(
    Readable.from(chunks.map((c) => (typeof c === 'string' ? Buffer.from(c) : c))),
    max,
  ))
    out.push(l);
  return out;
}

describe('readLines', () => {
  it('strips a BOM and CR, numbers lines, joins lines split across chunks', async () => {
    const lines = await collect(['\ufefftime,a\r\n2026', '-01-01,1\r\n', 'x,2']);
    expect(lines).toEqual([
      { kind: 'text', line: 1, text: 'time,a' },
      { kind: 'text', line: 2, text: '2026-01-01,1' },
      { kind: 'text', line: 3, text: 'x,2' },
    ]);
  });

  it('reports invalid UTF-8 and over-long lines without holding them', async () => {
    const lines = await collect(
      [Buffer.from([0x61, 0xff, 0x62, 0x0a]), 'é,1\n', 'y'.repeat(30), 'y'.repeat(30), '\nok\n'],
      40,
    );
    expect(lines[0]).toMatchObject({ kind: 'invalid-utf8', line: 1 });
    expect(lines[1]).toEqual({ kind: 'text', line: 2, text: 'é,1' });
    expect(lines[2]).toMatchObject({ kind: 'too-long', line: 3, bytes: 60 });
    expect(lines[3]).toEqual({ kind: 'text', line: 4, text: 'ok' });
  });
});

describe('splitCsvLine', () => {
  it('splits quoted fields with delimiters and doubled quotes (RFC 4180)', () => {
    expect(splitCsvLine('a,"b,c","say ""hi""",', ',')).toEqual({
      ok: true,
      fields: ['a', 'b,c', 'say "hi"', ''],
    });
    expect(splitCsvLine('1,5;"2,5"', ';')).toEqual({ ok: true, fields: ['1,5', '2,5'] });
  });
  it('names broken quoting', () => {
    expect(splitCsvLine('a,"b', ',')).toMatchObject({ ok: false, column: 2 });
    expect(splitCsvLine('a,"b"x,c', ',')).toMatchObject({ ok: false });
    expect(splitCsvLine('a,b"c', ',')).toMatchObject({ ok: false, column: 2 });
  });
});
