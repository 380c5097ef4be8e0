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
      { kind: 'text', line: 3, text: 'x,2', unterminated: true },
    ]);
  });

  // Issue 18 item 12: old Mac and some loggers end lines with CR alone.
  it('reads CR-only, and mixed CR / CRLF / LF line ends, also split across chunks', async () => {
    const cr = await collect(['time,a\r2026-01-01,1\r2026-01-02,2\r']);
    expect(cr.map((l) => [l.line, l.kind === 'text' ? l.text : l.kind])).toEqual([
      [1, 'time,a'],
      [2, '2026-01-01,1'],
      [3, '2026-01-02,2'],
    ]);
    // CRLF split between chunks is one line end; a CR at a chunk's end followed by text is one too.
    const mixed = await collect(['a\r', '\nb\rc\n', 'd\r', 'e\r\n\r\nf']);
    expect(mixed.map((l) => [l.line, l.kind === 'text' ? l.text : l.kind])).toEqual([
      [1, 'a'],
      [2, 'b'],
      [3, 'c'],
      [4, 'd'],
      [5, 'e'],
      [6, ''],
      [7, 'f'],
    ]);
    expect(mixed.map((l) => l.unterminated === true)).toEqual([
      false,
      false,
      false,
      false,
      false,
      false,
      true,
    ]);
  });

  // Issue 18 item 13: the reader says when the last line had no line end.
  it('marks only a last line without a line end as unterminated', async () => {
    expect((await collect(['a\nb\r\n'])).map((l) => l.unterminated === true)).toEqual([false, false]);
    expect((await collect(['a\nb\r'])).map((l) => l.unterminated === true)).toEqual([false, false]);
    expect((await collect(['a\n', 'b'])).map((l) => l.unterminated === true)).toEqual([false, true]);
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
