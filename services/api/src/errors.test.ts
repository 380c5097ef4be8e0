import { describe, expect, it } from 'vitest';
import { API_ERRORS, ApiError, formatTemplate, toProblem } from './errors.js';

describe('error registry', () => {
  it('gives each API code its own message', () => {
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
