import { readdirSync, readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { COMPUTE_ERRORS, ComputeError } from './errors.js';
import { prepareMachine } from './machine.js';
import { resolveComputeOptions } from './options.js';

describe('compute errors', () => {
  it('every code the sources raise is documented, and every documented code is raised', () => {
    const dir = new URL('.', import.meta.url);
    const raised = new Set<string>();
    for (const f of readdirSync(dir))
      if (f.endsWith('.ts') && !f.endsWith('.test.ts'))
        for (const m of readFileSync(new URL(f, dir), 'utf8').matchAll(/'(COMPUTE_[A-Z_]+)'/g))
          raised.add(m[1] as string);
    expect([...raised].sort()).toEqual(Object.keys(COMPUTE_ERRORS).sort());
  });

  it('carries the code and the values that made the call fail', () => {
    const bad = () => resolveComputeOptions({ gridMs: 60_000, stepMs: 30_000 });
    expect(bad).toThrow(ComputeError);
    expect(bad).toThrow(
      expect.objectContaining({ code: 'COMPUTE_BAD_CONFIG', details: { gridMs: 60_000, stepMs: 30_000 } }),
    );
    const row = {
      id: 1,
      slug: 'no-tags',
      name: 'no tags (invented)',
      kind: 'pump' as const,
      fluid: 'water',
      ratings: {},
      driverEfficiency: null,
      outOfService: false,
      keyTags: [],
      baselineSpec: null,
      siteAmbientPressure: null,
      siteTimeZone: 'UTC',
      tags: [],
      barometer: undefined,
    };
    expect(() => prepareMachine(row)).toThrow(
      expect.objectContaining({
        code: 'COMPUTE_BAD_CONFIG',
        details: { machine: 'no-tags', role: 'inletPressure' },
      }),
    );
  });
});
