import { readdirSync, readFileSync } from 'node:fs';
import { CAUTION } from '@isentrope/monitor';
import { describe, expect, it } from 'vitest';
import { PUBLIC_DIR } from './app.js';

describe('dashboard pages', () => {
  const pages = readdirSync(PUBLIC_DIR).filter((f) => f.endsWith('.html'));

  it('carry the caution, word for word, on every page', () => {
    expect(pages.length).toBeGreaterThanOrEqual(6);
    for (const p of pages) expect(readFileSync(`${PUBLIC_DIR}/${p}`, 'utf8'), p).toContain(CAUTION);
  });

  it('load scripts only from our own files (no inline script, as the CSP demands)', () => {
    for (const p of pages) {
      const html = readFileSync(`${PUBLIC_DIR}/${p}`, 'utf8');
      for (const tag of html.match(/<script[^>]*>/g) ?? []) expect(tag, p).toMatch(/src="\/js\/[\w-]+\.js"/);
      expect(html, p).toContain('<meta charset="utf-8">');
    }
  });
});
