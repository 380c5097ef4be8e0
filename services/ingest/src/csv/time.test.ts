import { describe, expect, it } from 'vitest';
import { detectTimeFormat, FoldTracker, timeParser, ZoneResolver } from './time.js';

const iso = (t: number) => new Date(t).toISOString();

describe('time formats', () => {
  // Expected instants are worked by hand from the ISO 8601 reading of each text (common practice, no source).
  it('reads the common plant formats and detects them in order', () => {
    const cases: [string, string, string][] = [
      ['2026-03-29T02:30:00Z', 'iso', '2026-03-29T02:30:00.000Z'],
      ['2026-03-29T02:30:00.25+01:00', 'iso', '2026-03-29T01:30:00.250Z'],
      ['2026-03-29 02:30:00', 'iso', '2026-03-29T02:30:00.000Z'],
      ['29.03.2026 02:30', 'dmy', '2026-03-29T02:30:00.000Z'],
      ['03/29/2026 02:30:00 PM', 'mdy12', '2026-03-29T14:30:00.000Z'],
      ['03/29/2026 12:05:00 AM', 'mdy12', '2026-03-29T00:05:00.000Z'],
      ['1774751400', 'epoch-s', '2026-03-29T02:30:00.000Z'],
      ['1774751400000', 'epoch-ms', '2026-03-29T02:30:00.000Z'],
    ];
    for (const [text, format, expected] of cases) {
      const f = detectTimeFormat(text, ['iso', 'ymd', 'dmy', 'mdy12', 'mdy', 'epoch-s', 'epoch-ms']);
      expect(f, text).toBe(format);
      const p = timeParser(format)(text);
      expect(p, text).toBeDefined();
      const t = p!.kind === 'instant' ? p!.t : p!.wall;
      expect(iso(t), text).toBe(expected);
    }
  });

  it('refuses impossible dates instead of rolling them over', () => {
    expect(timeParser('ymd')('2026-02-29 00:00:00')).toBeUndefined(); // 2026 is not a leap year
    expect(timeParser('dmy')('31.04.2026 10:00')).toBeUndefined();
    expect(timeParser('iso')('2026-03-29T24:00:00')).toBeUndefined();
    expect(detectTimeFormat('yesterday', ['iso', 'dmy'])).toBeUndefined();
  });

  it('accepts a luxon format string for anything else', () => {
    const p = timeParser('yyyyMMdd HHmmss')('20260329 013000');
    expect(p).toEqual({ kind: 'wall', wall: Date.parse('2026-03-29T01:30:00Z') });
  });
});

describe('ZoneResolver', () => {
  // EU summer time: last Sunday of March and October at 01:00 UTC (Directive 2000/84/EC);
  // in 2026 these are 29 March and 25 October.
  const berlin = new ZoneResolver('Europe/Berlin');
  const wall = (s: string) => Date.parse(`${s}Z`);

  it('gives one instant outside the changes', () => {
    expect(berlin.resolve(wall('2026-03-29T01:30:00'))).toEqual({
      kind: 'unique',
      t: Date.parse('2026-03-29T00:30:00Z'),
    });
    expect(berlin.resolve(wall('2026-03-29T03:30:00'))).toEqual({
      kind: 'unique',
      t: Date.parse('2026-03-29T01:30:00Z'),
    });
    expect(berlin.resolve(wall('2026-07-01T12:00:00'))).toEqual({
      kind: 'unique',
      t: Date.parse('2026-07-01T10:00:00Z'),
    });
  });

  it('finds no instant in the skipped hour and two in the repeated hour', () => {
    expect(berlin.resolve(wall('2026-03-29T02:30:00'))).toEqual({ kind: 'gap' });
    expect(berlin.resolve(wall('2026-10-25T02:30:00'))).toEqual({
      kind: 'ambiguous',
      earlier: Date.parse('2026-10-25T00:30:00Z'),
      later: Date.parse('2026-10-25T01:30:00Z'),
    });
  });

  it('handles the US rule (second Sunday of March, Energy Policy Act of 2005)', () => {
    const ny = new ZoneResolver('America/New_York');
    expect(ny.resolve(wall('2026-03-08T02:15:00'))).toEqual({ kind: 'gap' });
    expect(ny.resolve(wall('2026-03-08T03:15:00'))).toEqual({
      kind: 'unique',
      t: Date.parse('2026-03-08T07:15:00Z'),
    });
  });

  it('rejects an unknown zone with a typed error', () => {
    expect(() => new ZoneResolver('Mars/Olympus')).toThrow(
      expect.objectContaining({ code: 'INGEST_BAD_OPTIONS' }),
    );
  });
});

describe('FoldTracker', () => {
  it('takes the earlier offset first and the later once time goes back (common practice, no source)', () => {
    const f = new FoldTracker();
    const w = (s: string) => Date.parse(`2026-10-25T${s}Z`);
    f.note(w('01:45:00'));
    expect(f.ambiguous(w('02:00:00'))).toBe('earlier');
    expect(f.ambiguous(w('02:30:00'))).toBe('earlier');
    expect(f.ambiguous(w('02:00:00'))).toBe('later');
    expect(f.ambiguous(w('02:30:00'))).toBe('later');
    f.note(w('03:00:00'));
    expect(f.ambiguous(w('02:30:00'))).toBe('later'); // backwards again: only the later is left
  });
});
