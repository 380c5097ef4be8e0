// Expected values: hand calculations from the model's own definitions (common practice, no source).
import { describe, expect, it } from 'vitest';
import { BadInputError } from './errors.js';
import { incompressibleLiquid } from './liquid.js';

describe('incompressible liquid', () => {
  const oil = incompressibleLiquid(870, 1900, 'lube oil');

  it('round-trips (p, T) through (p, h) and (p, s)', () => {
    const st = oil.statePT(5e5, 330);
    expect(oil.statePH(5e5, st.h).T).toBeCloseTo(330, 10);
    expect(oil.statePS(5e5, st.s).T).toBeCloseTo(330, 10);
  });

  it('dh = c dT + v dp and ds = c dT / T (incompressible substance model, any thermodynamics text)', () => {
    const a = oil.statePT(1e5, 300);
    const b = oil.statePT(11e5, 310);
    expect(b.h - a.h).toBeCloseTo(1900 * 10 + 1e6 / 870, 6);
    expect(b.s - a.s).toBeCloseTo(1900 * Math.log(310 / 300), 9);
    // Isentropic is isothermal: h(p2, s1) - h1 = v dp exactly.
    expect(oil.statePS(11e5, a.s).h - a.h).toBeCloseTo(1e6 / 870, 6);
  });

  it('rejects a density or heat capacity that is not positive, naming the field', () => {
    expect(() => incompressibleLiquid(0, 4000)).toThrow(BadInputError);
    expect(() => incompressibleLiquid(1000, Number.NaN)).toThrow(/liquid\.cp/);
  });
});
