/**
 * The pieces wired as the jobs will wire them, on invented data: a stuck transmitter must raise an
 * instrument-fault alert and no drift alert. Expectations: common practice, no source.
 */
import { describe, expect, it } from 'vitest';
import { type AlertState, initialAlert, stepAlert } from './alerts.js';
import { alignTags } from './align.js';
import { type BandConfig, type BandState, INITIAL_BAND_STATE, stepBand } from './bands.js';
import { computeDrift, fitBaseline } from './baseline.js';
import { rollingWindows } from './rolling.js';
import { detectSteadyState } from './steady-state.js';
import { seededNormal, seededRandom } from './synthetic.js';
import { validateAligned } from './validate.js';

const MIN = 60_000;
const HOUR = 3_600_000;
const days = 3;
const n = days * 1440;
const z = seededNormal(51);
const rnd = seededRandom(52);

// Load plateaus of 3 h with 20-minute ramps; outlet temperature follows load; T_out sticks from day 2.
const load: number[] = [];
let level = 0.7;
for (let i = 0; i < n; i++) {
  const k = i % 200;
  if (k === 0) level = 0.5 + 0.5 * rnd();
  load.push(level);
}
for (let i = 1; i < n; i++) if (i % 200 < 20) load[i] = load[i - 1]! + (load[i]! - load[i - 1]!) * 0.2;
const loadMeas = load.map((v) => v + 0.002 * z());
const pIn = load.map((v) => 40e5 * v + 2e3 * z());
const tTrue = load.map((v) => 400 + 50 * v + 0.3 * z());
const stuckFrom = 1440;
const tMeas = tTrue.map((v, i) => (i >= stuckFrom ? tTrue[stuckFrom]! : v));
const times = load.map((_, i) => i * MIN);

function run(respectValidation: boolean): { drift: AlertState; instrument: AlertState; driftRaised: number } {
  const aligned = alignTags(
    [
      { role: 'load', t: times, value: loadMeas },
      { role: 'p_in', t: times, value: pIn },
      { role: 'T_out', t: times, value: tMeas },
    ],
    { startMs: 0, endMs: n * MIN },
  );
  const validation = validateAligned(aligned, [
    { role: 'load', key: true, min: 0, max: 1.2, stuck: { window: 30, minStd: 1e-4 } },
    { role: 'p_in', key: true, min: 0, max: 100e5, stuck: { window: 30, minStd: 10 } },
    { role: 'T_out', key: true, min: 250, max: 900, stuck: { window: 30, minStd: 0.01 } },
  ]);
  const steady = detectSteadyState([{ role: 'load', value: aligned.tags.get('load')!.value }]).steady;
  // Invented efficiency model: the outlet temperature above its expected value costs efficiency.
  const L = aligned.tags.get('load')!.value;
  const T = aligned.tags.get('T_out')!.value;
  const efficiency = Float64Array.from(L, (l, i) => 0.85 - 0.01 * (T[i]! - (400 + 50 * l)));
  const use = Uint8Array.from(steady, (s, i) => (respectValidation ? s & validation.valid[i]! : s));
  const input = { t: aligned.t, efficiency, uSys: new Float64Array(n).fill(0.002), operatingPoint: L, use };

  // Baseline on day 1 (before the fault).
  const ref = Array.from({ length: stuckFrom }, (_, i) => i).filter((i) => use[i] === 1);
  const baseline = fitBaseline(
    ref.map((i) => L[i]!),
    ref.map((i) => efficiency[i]!),
    { method: 'polynomial', degree: 1 },
  );

  const band: BandConfig = {
    direction: 'low',
    warning: -1,
    alarm: -2,
    deadband: 0.3,
    onDelayMs: HOUR,
    minCoverage: 0.3,
  };
  let bandState: BandState = INITIAL_BAND_STATE;
  let drift = initialAlert('drift');
  let instrument = initialAlert('instrument-fault');
  let driftRaised = 0; // transitions into active-unack
  for (let end = 2 * HOUR; end <= n * MIN; end += HOUR) {
    const [w] = rollingWindows(input, end, MIN, [HOUR]);
    const d =
      w!.n > 0
        ? computeDrift(w!.efficiency, w!.uEfficiency, baseline, w!.operatingPoint)
        : { driftPts: Number.NaN, uDriftPts: Number.NaN };
    const step = stepBand(
      bandState,
      { t: end, value: d.driftPts, u: d.uDriftPts, coverage: w!.coverage },
      band,
    );
    bandState = step.state;
    if (step.changed) {
      const r = stepAlert(
        drift,
        step.to === 'normal' ? { type: 'clear' } : { type: 'activate', severity: step.to },
        end,
      );
      driftRaised += r.transitions.filter((t) => t.to === 'active-unack').length;
      drift = r.state;
    }
    // Instrument alert: more than half of the last hour flagged.
    let faults = 0;
    for (let i = (end - HOUR) / MIN; i < end / MIN; i++) faults += validation.instrumentFault[i]!;
    const active = faults > 30;
    if (active !== instrument.conditionActive)
      instrument = stepAlert(
        instrument,
        active ? { type: 'activate', severity: 'alarm' } : { type: 'clear' },
        end,
      ).state;
  }
  return { drift, instrument, driftRaised };
}

describe('pipeline: stuck transmitter', () => {
  it('raises an instrument-fault alert and no drift alert', () => {
    const r = run(true);
    expect(r.instrument.status).toBe('active-unack');
    expect(r.drift.status).toBe('normal');
    expect(r.driftRaised).toBe(0);
  });

  it('control: without validation the stuck reading would have raised a false drift alert', () => {
    const r = run(false);
    expect(r.driftRaised).toBeGreaterThan(0);
  });
});
