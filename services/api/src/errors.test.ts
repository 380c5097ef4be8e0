import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { API_ERRORS, ApiError, formatTemplate, toProblem } from './errors.js';

const doc = readFileSync(new URL('../ERRORS.md', import.meta.url), 'utf8');
const rows = [...doc.matchAll(/^\|\s*(API_[A-Z_]+)\s*\|\s*(\d{3})\s*\|/gm)].map((m) => ({
  code: m[1]!,
  status: Number(m[2]),
}));

describe('error registry', () => {
  it('documents every code in ERRORS.md with its status, and nothing else', () => {
    const codes = Object.keys(API_ERRORS).sort();
    expect(rows.map((r) => r.code).sort()).toEqual(codes);
    for (const r of rows) expect(r.status).toBe(API_ERRORS[r.code as keyof typeof API_ERRORS].status);
  });

  it('uses each code once in the docs and gives each code its own message', () => {
    expect(new Set(rows.map((r) => r.code)).size).toBe(rows.length);
    const templates = Object.values(API_ERRORS).map((d) => d.template);
    expect(new Set(templates).size).toBe(templates.length);
  });

  it('fills templates and shows missing values as ?', () => {
    expect(formatTemplate('{entity} {id} does not exist.', { entity: 'machine', id: 7 })).toBe(
      'machine 7 does not exist.',
    );
    expect(formatTemplate('{a}-{b}', { a: 1 })).toBe('1-?');
  });

  it('turns an error into a problem with its stable code and status', () => {
    const p = toProblem(new ApiError('API_FORBIDDEN', { required: 'engineer', role: 'viewer' }), '/api/x');
    expect(p).toMatchObject({ status: 403, code: 'API_FORBIDDEN', instance: '/api/x', title: 'Not allowed' });
    expect(p.detail).toBe('This needs the role engineer; you have viewer.');
  });
});
