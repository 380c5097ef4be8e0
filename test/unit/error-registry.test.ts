import { readdirSync, readFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import { describe, expect, it } from 'vitest';
import {
  ERROR_AREAS,
  type ErrorArea,
  registeredErrors,
  renderErrorsDoc,
} from '../../scripts/error-registry.js';

const root = new URL('../../', import.meta.url).pathname;

function sourceFiles(folder: string): string[] {
  const out: string[] = [];
  const walk = (dir: string): void => {
    for (const entry of readdirSync(dir, { withFileTypes: true })) {
      const path = join(dir, entry.name);
      if (entry.isDirectory()) walk(path);
      else if (/\.(ts|mjs|js)$/.test(entry.name) && !/\.test\.ts$/.test(entry.name)) out.push(path);
    }
  };
  walk(join(root, folder, 'src'));
  return out;
}

/** Quoted literals that look like one of the areas' codes. */
function codeLiterals(text: string, prefixes: readonly string[]): string[] {
  const pattern = new RegExp(`['"\`]((?:${prefixes.join('|')})[A-Z0-9_]+)['"\`]`, 'g');
  return [...text.matchAll(pattern)].map((m) => m[1]!);
}

const allPrefixes = ERROR_AREAS.flatMap((a) => a.prefixes);

describe('the error registry', () => {
  it('declares each code once across every area', () => {
    const codes = registeredErrors().map((e) => e.code);
    const twice = codes.filter((c, i) => codes.indexOf(c) !== i);
    expect(twice, 'codes declared in more than one catalog').toEqual([]);
  });

  it("gives each code one of its area's prefixes, so no two areas can claim one code", () => {
    for (const area of ERROR_AREAS) {
      const foreign = Object.keys(area.catalog).filter((c) => !area.prefixes.some((p) => c.startsWith(p)));
      expect(foreign, `${area.folder}: codes without the prefixes ${area.prefixes.join(', ')}`).toEqual([]);
    }
  });

  it('is what ERRORS.md says (run `npm run errors:doc` after changing a catalog)', () => {
    expect(readFileSync(join(root, 'ERRORS.md'), 'utf8')).toBe(renderErrorsDoc());
  });

  it('holds every code that the source raises or names', () => {
    const known = new Set(registeredErrors().map((e) => e.code));
    const unknown: string[] = [];
    const folders = new Set([...ERROR_AREAS.map((a) => a.folder), 'services/demo', 'packages/errors']);
    for (const folder of folders) {
      for (const file of sourceFiles(folder)) {
        for (const code of codeLiterals(readFileSync(file, 'utf8'), allPrefixes)) {
          if (!known.has(code)) unknown.push(`${relative(root, file)}: ${code}`);
        }
      }
    }
    expect(unknown, 'codes used in source but declared in no catalog').toEqual([]);
  });

  it('marks as retired every code that nothing raises any more', () => {
    const used = new Set<string>();
    const folders = new Set([...ERROR_AREAS.map((a) => a.folder), 'services/demo']);
    for (const folder of folders) {
      for (const file of sourceFiles(folder)) {
        for (const code of codeLiterals(readFileSync(file, 'utf8'), allPrefixes)) used.add(code);
      }
    }
    const idle = registeredErrors().filter((e) => !e.retired && !used.has(e.code));
    expect(
      idle.map((e) => `${e.folder}: ${e.code}`),
      'declared codes nothing raises: mark them retired',
    ).toEqual([]);
  });

  it('fails on a code declared in two areas, or with a foreign prefix (the checks above can fail)', () => {
    const a: ErrorArea = { folder: 'a', prefixes: ['A_'], catalog: { A_ONE: { meaning: 'one' } } };
    const b: ErrorArea = { folder: 'b', prefixes: ['B_'], catalog: { A_ONE: { meaning: 'again' } } };
    const codes = registeredErrors([a, b]).map((e) => e.code);
    expect(codes.filter((c, i) => codes.indexOf(c) !== i)).toEqual(['A_ONE']);
    expect(Object.keys(b.catalog).filter((c) => !b.prefixes.some((p) => c.startsWith(p)))).toEqual(['A_ONE']);
    expect(codeLiterals("throw new X('A_TWO', 'msg')", ['A_'])).toEqual(['A_TWO']);
    expect(renderErrorsDoc([a])).toContain('| A_ONE |  | one |  |');
  });
});
