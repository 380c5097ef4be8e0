/**
 * The instrument detectors of @isentrope/monitor on the demo scenario's own readings: a
 * cross-service test (the package's tests do not import services/). DEMO DATA - INVENTED
 * (services/demo, the Harbourside scenario): from 80 % of the span gb-1's barg inlet tag
 * GB1.PI-10 is fed absolute values.
 */
import { detectGaugeAbsoluteStep, pressureRatioConsistency } from '@isentrope/monitor';
import { toSI } from '@isentrope/thermo';
import { describe, expect, it } from 'vitest';
import {
  DEMO_AMBIENT_PRESSURE,
  DEMO_TAGS,
  demoReading,
  machineTruth,
} from '../../services/demo/src/scenario.js';

const T0 = Date.UTC(2026, 0, 1);
const MIN = 60_000;

describe("the demo's gauge/absolute mix-up on GB1.PI-10", () => {
  it("finds the demo's GB1.PI-10 mix-up: exactly one reads-high step near 80 % of a 14-day span", () => {
    // DEMO DATA - INVENTED (services/demo): from 80 % of the span the barg tag is fed absolute values.
    const span = { start: T0, end: T0 + 14 * 86_400_000 };
    const tagIndex = DEMO_TAGS.findIndex((tag) => tag.name === 'GB1.PI-10');
    expect(tagIndex).toBeGreaterThanOrEqual(0);
    const step = MIN; // the demo history's 1-minute readings
    const n = (span.end - span.start) / step;
    const t = new Float64Array(n);
    const value = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const ti = span.start + i * step;
      t[i] = ti;
      const reading = demoReading(span, tagIndex, ti, machineTruth(span, 'gb-1', ti));
      value[i] =
        reading === undefined
          ? Number.NaN
          : toSI(reading, 'barg', { ambientPressure: DEMO_AMBIENT_PRESSURE });
    }
    const found = detectGaugeAbsoluteStep({ t, value, ambientPressure: DEMO_AMBIENT_PRESSURE });
    expect(found).toHaveLength(1);
    const f = found[0]!;
    expect(f.direction).toBe('reads-high');
    const at80 = span.start + 0.8 * (span.end - span.start);
    expect(Math.abs(f.at - at80)).toBeLessThanOrEqual(15 * step); // within one window
    expect(Math.abs(f.shift - DEMO_AMBIENT_PRESSURE)).toBeLessThan(0.05 * DEMO_AMBIENT_PRESSURE);
  }, 30_000);

  it("confirms the demo's GB1.PI-10 mix-up through gb-1's temperatures", () => {
    // DEMO DATA - INVENTED (services/demo): 14-day span, readings a minute, one day either side of 80 %.
    const span = { start: T0, end: T0 + 14 * 86_400_000 };
    const names = ['GB1.PI-10', 'GB1.PI-20', 'GB1.TI-10', 'GB1.TI-20'];
    const idx = names.map((name) => DEMO_TAGS.findIndex((tag) => tag.name === name));
    expect(idx.every((i) => i >= 0)).toBe(true);
    const from = span.start + 0.8 * (span.end - span.start) - 86_400_000;
    const n = 2 * 1440;
    const t = new Float64Array(n);
    const cols = names.map(() => new Float64Array(n));
    for (let i = 0; i < n; i++) {
      const ti = from + i * MIN;
      t[i] = ti;
      const truth = machineTruth(span, 'gb-1', ti);
      idx.forEach((tagIndex, c) => {
        const v = demoReading(span, tagIndex, ti, truth);
        const col = cols[c]!;
        if (v === undefined) col[i] = Number.NaN;
        else if (c < 2) col[i] = toSI(v, 'barg', { ambientPressure: DEMO_AMBIENT_PRESSURE });
        else col[i] = toSI(v, 'degC');
      });
    }
    const [pIn, pOut, TIn, TOut] = cols as [Float64Array, Float64Array, Float64Array, Float64Array];
    const steps = detectGaugeAbsoluteStep({ t, value: pIn, ambientPressure: DEMO_AMBIENT_PRESSURE });
    expect(steps).toHaveLength(1);
    const r = pressureRatioConsistency(
      { t, pIn, pOut, TIn, TOut, ambientPressure: DEMO_AMBIENT_PRESSURE },
      steps[0]!.at,
    );
    expect(r.verdict).toBe('mix-up');
    expect(r.mixUp).toMatchObject({ tag: 'inlet', direction: 'reads-high' });
  }, 30_000);
});
