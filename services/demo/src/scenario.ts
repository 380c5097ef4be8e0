/**
 * The invented demo plant's behaviour: a pure function of time that gives, for every machine,
 * its true operating state (computed with Isentrope's own thermodynamic models, so the true
 * efficiency is known), and for every tag the reading a transmitter would send, with noise
 * and the faults the scenario plants. DEMO DATA - INVENTED.
 *
 * Events sit at fractions of the history span, so a 14-day test history and a one-year demo
 * history tell the same story:
 * - ac-1 fouls from 25 % of the span on, losing 6 points of isentropic efficiency by the end;
 * - st-1 erodes 2.5 points over the first 70 %, is overhauled at 70 % (restored), erodes on;
 * - st-1 trips at 30 % (2 h) and at 50 % (3 h); bfp-2 trips with it at 50 % and comes back
 *   3 points worse (a step loss after an event);
 * - bfp-1's discharge pressure transmitter sticks from 60 % to 75 %;
 * - idf-2's inlet temperature transmitter drifts up to +4 K from 40 % to the end;
 * - gb-1's data has a 6-hour gap at 35 %; from 80 % its inlet pressure transmitter, replaced by
 *   one that reads absolute, still feeds a tag configured as gauge (a gauge/absolute mix-up);
 * - rare spikes on every tag.
 */
import { dryAir, type Fluid, fromSI, naturalGas, normalVolumeFlowToMassFlow, water } from '@isentrope/thermo';
import { normal, uniform, wander } from './random.js';

export const DEMO_AMBIENT_PRESSURE = 101_300; // [Pa], the site's "1.013 bara"
const HOUR = 3_600_000;
const DAY = 24 * HOUR;

export interface DemoSpan {
  /** Start of the history [epoch ms]. */
  readonly start: number;
  /** End of the scripted story [epoch ms]; live data past it keeps the end state. */
  readonly end: number;
}

export type DemoMachineId = 'st-1' | 'bfp-1' | 'bfp-2' | 'ac-1' | 'gb-1' | 'idf-1' | 'idf-2';

/** A machine's true state at one instant, SI units. */
export interface MachineTruth {
  readonly machine: DemoMachineId;
  readonly running: boolean;
  /** True efficiency the scenario imposes (isentropic for turbine and compressors, hydraulic for pumps, fan efficiency for fans). */
  readonly efficiency: number;
  /** Points of efficiency lost to the scripted degradation at this instant (positive = loss). */
  readonly loss: number;
  readonly inletPressure: number;
  readonly inletTemperature: number;
  readonly outletPressure: number;
  readonly outletTemperature: number;
  /** [kg/s] */
  readonly massFlow: number;
  /** Actual inlet volume flow [m3/s] (fans). */
  readonly volumeFlow: number;
  /** Electrical power [W] at the generator or motor terminals. */
  readonly electricalPower: number;
}

const air = dryAir();
/**
 * Density of that air at normal conditions (0 degC, 101.325 kPa) as an ideal gas [kg/m3]: M p/(R T), the
 * same conversion the compute job applies to the Nm3/h flow tag, so truth and computed mass flow agree.
 */
const AIR_NORMAL_DENSITY = normalVolumeFlowToMassFlow(1, air.molarMass, 'normal');
const gas = naturalGas({ CH4: 0.92, C2H6: 0.04, C3H8: 0.01, N2: 0.02, CO2: 0.01 }, 'peng-robinson');

/** Fraction of the span at time t (may exceed 1 for live data past the story's end). */
function fraction(span: DemoSpan, t: number): number {
  return (t - span.start) / (span.end - span.start);
}

/** Outage windows [from, to) in epoch ms, with a start-up ramp after each. */
interface Outage {
  readonly from: number;
  readonly to: number;
}

function outageAt(span: DemoSpan, f: number, hours: number): Outage {
  const from = span.start + f * (span.end - span.start);
  return { from, to: from + hours * HOUR };
}

/** 0 while stopped, ramping to 1 over `rampMs` after an outage, else 1. */
function availability(t: number, outages: readonly Outage[], rampMs: number): number {
  for (const o of outages) {
    if (t >= o.from && t < o.to) return 0;
    if (t >= o.to && t < o.to + rampMs) return (t - o.to) / rampMs;
  }
  return 1;
}

/** District-heating demand, 0.45..1: season, time of day and weather. */
export function heatDemand(t: number): number {
  const dayOfYear = ((t / DAY) % 365.25) + 0.0;
  const season = 0.5 + 0.5 * Math.cos((2 * Math.PI * (dayOfYear - 15)) / 365.25); // 1 mid-January
  const hour = (t / HOUR) % 24;
  const daily = Math.sin((2 * Math.PI * (hour - 5)) / 24);
  const weather = wander(11, t / 1000, 3 * 86_400);
  const demand = 0.55 + 0.3 * season + 0.07 * daily + 0.06 * weather;
  return Math.min(1, Math.max(0.45, demand));
}

/** Outdoor air temperature [K]. */
export function ambientTemperature(t: number): number {
  const dayOfYear = (t / DAY) % 365.25;
  const season = -Math.cos((2 * Math.PI * (dayOfYear - 15)) / 365.25); // -1 mid-January
  const hour = (t / HOUR) % 24;
  return (
    273.15 +
    9 +
    8 * season +
    3.5 * Math.sin((2 * Math.PI * (hour - 9)) / 24) +
    2 * wander(12, t / 1000, 2 * 86_400)
  );
}

interface Story {
  readonly turbineOutages: readonly Outage[];
  readonly bfp2Outages: readonly Outage[];
  readonly overhaulAt: number;
  readonly eventAt: number;
}

function story(span: DemoSpan): Story {
  const trip1 = outageAt(span, 0.3, 2);
  const event = outageAt(span, 0.5, 3);
  const overhaulHours = Math.min(24, ((span.end - span.start) / HOUR) * 0.02);
  const overhaul = outageAt(span, 0.7, overhaulHours);
  return {
    turbineOutages: [trip1, event, overhaul],
    bfp2Outages: [event],
    overhaulAt: overhaul.to,
    eventAt: event.to,
  };
}

const RAMP = HOUR;

/** Scripted loss [points of efficiency] per machine at time t. */
export function scriptedLoss(span: DemoSpan, machine: DemoMachineId, t: number): number {
  const f = fraction(span, t);
  const s = story(span);
  switch (machine) {
    case 'ac-1':
      return f <= 0.25 ? 0 : (6 * (Math.min(f, 1) - 0.25)) / 0.75;
    case 'st-1': {
      const rate = 2.5 / 0.7; // points per span fraction
      return t < s.overhaulAt
        ? rate * Math.min(Math.max(f, 0), 0.7)
        : rate * (Math.min(f, 1) - fraction(span, s.overhaulAt));
    }
    case 'bfp-2':
      return t >= s.eventAt ? 3 : 0;
    default:
      return 0;
  }
}

function expansionOutlet(fluid: Fluid, pIn: number, TIn: number, pOut: number, eta: number) {
  const inlet = fluid.statePT(pIn, TIn);
  const ideal = fluid.statePS(pOut, inlet.s);
  const h = inlet.h - eta * (inlet.h - ideal.h);
  return { inlet, outlet: fluid.statePH(pOut, h) };
}

function compressionOutlet(fluid: Fluid, pIn: number, TIn: number, pOut: number, eta: number) {
  const inlet = fluid.statePT(pIn, TIn);
  const ideal = fluid.statePS(pOut, inlet.s);
  const h = inlet.h + (ideal.h - inlet.h) / eta;
  return { inlet, outlet: fluid.statePH(pOut, h) };
}

/** The true state of one machine at time t. */
export function machineTruth(span: DemoSpan, machine: DemoMachineId, t: number): MachineTruth {
  const s = story(span);
  const demand = heatDemand(t);
  const loss = scriptedLoss(span, machine, t);
  const seconds = t / 1000;
  switch (machine) {
    case 'st-1': {
      const a = availability(t, s.turbineOutages, RAMP);
      const pIn = 41e5 + 0.3e5 * wander(21, seconds, 7200);
      const TIn = 673.15 + 3 * wander(22, seconds, 5400);
      const pOut = 4.5e5 + 0.3e5 * (demand - 0.75);
      const massFlow = a * (6 + 9 * demand);
      // Part-load curve of the invented machine, then the scripted loss; a start-up runs poorly.
      const eta = (0.8 - 0.08 * (1 - demand) ** 2 - loss / 100) * (a < 1 ? 0.6 + 0.4 * a : 1);
      const { inlet, outlet } = expansionOutlet(water, pIn, TIn, pOut, eta);
      const power = a > 0 ? massFlow * (inlet.h - outlet.h) * 0.975 : 0;
      return {
        machine,
        running: a > 0,
        efficiency: eta,
        loss,
        inletPressure: pIn,
        inletTemperature: TIn,
        outletPressure: a > 0 ? pOut : 1.2e5,
        outletTemperature: a > 0 ? outlet.T : 373.15,
        massFlow,
        volumeFlow: massFlow * inlet.v,
        electricalPower: power,
      };
    }
    case 'bfp-1':
    case 'bfp-2': {
      // The pumps share the boiler feed (= steam flow); while bfp-2 is out, bfp-1 carries it alone.
      const a2 = availability(t, s.bfp2Outages, RAMP / 4);
      const total = 6 + 9 * demand;
      // Alone, bfp-1 is held at its rated flow (the boiler backs off), so it stays on its curve.
      const massFlow = machine === 'bfp-1' ? Math.min(total / (1 + a2), 8) : (total * a2) / (1 + a2);
      const pIn = 5.5e5 + 0.1e5 * wander(machine === 'bfp-1' ? 31 : 32, seconds, 3600);
      const TIn = 378.15 + 0.5 * wander(33, seconds, 7200);
      const q = massFlow / 7.5; // fraction of the best-efficiency flow
      const pOut = massFlow > 0 ? 48e5 + 4e5 * (1 - q * q) : pIn;
      const eta = Math.max(0.2, 0.74 - 0.25 * (q - 1) ** 2 - loss / 100);
      const { inlet, outlet } = compressionOutlet(water, pIn, TIn, pOut, eta);
      const shaft = massFlow > 0 ? massFlow * (outlet.h - inlet.h) : 0;
      return {
        machine,
        running: massFlow > 0,
        efficiency: eta,
        loss,
        inletPressure: pIn,
        inletTemperature: TIn,
        outletPressure: pOut,
        outletTemperature: massFlow > 0 ? outlet.T : TIn,
        massFlow,
        volumeFlow: massFlow * inlet.v,
        electricalPower: shaft / 0.95,
      };
    }
    case 'ac-1': {
      const pIn = DEMO_AMBIENT_PRESSURE - 800 - 200 * wander(41, seconds, 86_400);
      const TIn = ambientTemperature(t);
      const pOut = 4.5e5 + 0.05e5 * wander(42, seconds, 2 * 3600);
      const normalFlow = 1800 + 600 * (0.5 + 0.5 * wander(43, seconds, 4 * 3600)); // [Nm3/h]
      const massFlow = (normalFlow / 3600) * AIR_NORMAL_DENSITY;
      const q = normalFlow / 2400;
      const eta = 0.8 - 0.05 * (1 - q) ** 2 - loss / 100;
      const { inlet, outlet } = compressionOutlet(air, pIn, TIn, pOut, eta);
      return {
        machine,
        running: true,
        efficiency: eta,
        loss,
        inletPressure: pIn,
        inletTemperature: TIn,
        outletPressure: pOut,
        outletTemperature: outlet.T,
        massFlow,
        volumeFlow: massFlow * inlet.v,
        electricalPower: (massFlow * (outlet.h - inlet.h)) / 0.96,
      };
    }
    case 'gb-1': {
      const pIn = 18e5 + 0.4e5 * wander(51, seconds, 6 * 3600);
      const TIn = 283.15 + 0.6 * (ambientTemperature(t) - 283.15);
      const pOut = 30e5 + 0.3e5 * wander(52, seconds, 3600);
      const massFlow = 6 + 4 * demand;
      const q = massFlow / 9;
      const eta = 0.78 - 0.06 * (1 - q) ** 2 - loss / 100;
      const { inlet, outlet } = compressionOutlet(gas, pIn, TIn, pOut, eta);
      return {
        machine,
        running: true,
        efficiency: eta,
        loss,
        inletPressure: pIn,
        inletTemperature: TIn,
        outletPressure: pOut,
        outletTemperature: outlet.T,
        massFlow,
        volumeFlow: massFlow * inlet.v,
        electricalPower: (massFlow * (outlet.h - inlet.h)) / 0.965,
      };
    }
    case 'idf-1':
    case 'idf-2': {
      const key = machine === 'idf-1' ? 61 : 62;
      const volumeFlow = (45_000 + 45_000 * demand + 1500 * wander(key, seconds, 4 * 3600)) / 3600; // [m3/s]
      const pIn = DEMO_AMBIENT_PRESSURE - 1800 * (volumeFlow / 25) ** 2;
      const pOut = DEMO_AMBIENT_PRESSURE + 600 * (volumeFlow / 25) ** 2;
      const TIn = 413.15 + 5 * wander(key + 2, seconds, 7200);
      const q = volumeFlow / 25;
      const eta = 0.8 - 0.15 * (1 - q) ** 2 - loss / 100;
      const { inlet, outlet } = compressionOutlet(air, pIn, TIn, pOut, eta);
      const massFlow = volumeFlow / inlet.v;
      return {
        machine,
        running: true,
        efficiency: eta,
        loss,
        inletPressure: pIn,
        inletTemperature: TIn,
        outletPressure: pOut,
        outletTemperature: outlet.T,
        massFlow,
        volumeFlow,
        electricalPower: (massFlow * (outlet.h - inlet.h)) / 0.95,
      };
    }
  }
}

export const DEMO_MACHINES: readonly DemoMachineId[] = [
  'st-1',
  'bfp-1',
  'bfp-2',
  'ac-1',
  'gb-1',
  'idf-1',
  'idf-2',
];

/** How a tag's reading is made from its machine's truth. */
export interface DemoTag {
  readonly name: string;
  readonly machine: DemoMachineId | undefined;
  readonly unit: string;
  /** Standard deviation of the noise, in the tag unit. */
  readonly noise: number;
  /** Decimals the transmitter reports. */
  readonly decimals: number;
  readonly truth: (m: MachineTruth | undefined, t: number) => number;
}

const prefix: Record<DemoMachineId, string> = {
  'st-1': 'ST1',
  'bfp-1': 'BFP1',
  'bfp-2': 'BFP2',
  'ac-1': 'AC1',
  'gb-1': 'GB1',
  'idf-1': 'IDF1',
  'idf-2': 'IDF2',
};

function machineTags(machine: DemoMachineId): DemoTag[] {
  const p = prefix[machine];
  const inNo = machine === 'st-1' ? '100' : '10';
  const outNo = machine === 'st-1' ? '200' : '20';
  const pressureUnit =
    machine === 'ac-1'
      ? { in: 'mbarg', out: 'barg' }
      : machine.startsWith('idf')
        ? { in: 'mbarg', out: 'mbarg' }
        : { in: 'barg', out: 'barg' };
  const flow =
    machine === 'ac-1'
      ? { unit: 'Nm3/h', noise: 0.01, value: (m: MachineTruth) => (m.massFlow / AIR_NORMAL_DENSITY) * 3600 }
      : machine.startsWith('idf')
        ? { unit: 'm3/h', noise: 0.01, value: (m: MachineTruth) => m.volumeFlow * 3600 }
        : { unit: 't/h', noise: 0.005, value: (m: MachineTruth) => m.massFlow * 3.6 };
  const powerUnit = machine === 'st-1' ? 'MW' : 'kW';
  const pressureNoise = (unit: string) => (unit === 'mbarg' ? 0.3 : machine === 'st-1' ? 0.03 : 0.02);
  const need = (m: MachineTruth | undefined): MachineTruth => {
    if (m === undefined) throw new Error(`demo tag of ${machine} asked without its machine state`);
    return m;
  };
  return [
    {
      name: `${p}.PI-${inNo}`,
      machine,
      unit: pressureUnit.in,
      noise: pressureNoise(pressureUnit.in),
      decimals: 3,
      truth: (m) =>
        fromSI(need(m).inletPressure, pressureUnit.in, { ambientPressure: DEMO_AMBIENT_PRESSURE }),
    },
    {
      name: `${p}.TI-${inNo}`,
      machine,
      unit: 'degC',
      noise: 0.1,
      decimals: 2,
      truth: (m) => need(m).inletTemperature - 273.15,
    },
    {
      name: `${p}.PI-${outNo}`,
      machine,
      unit: pressureUnit.out,
      noise: pressureNoise(pressureUnit.out),
      decimals: 3,
      truth: (m) =>
        fromSI(need(m).outletPressure, pressureUnit.out, { ambientPressure: DEMO_AMBIENT_PRESSURE }),
    },
    {
      name: `${p}.TI-${outNo}`,
      machine,
      unit: 'degC',
      noise: 0.1,
      decimals: 2,
      truth: (m) => need(m).outletTemperature - 273.15,
    },
    {
      name: `${p}.FI-${inNo}`,
      machine,
      unit: flow.unit,
      noise: flow.noise,
      decimals: 2,
      truth: (m) => flow.value(need(m)),
    },
    {
      name: `${p}.JI-${inNo}`,
      machine,
      unit: powerUnit,
      noise: 0.003,
      decimals: machine === 'st-1' ? 4 : 2,
      truth: (m) => fromSI(need(m).electricalPower, powerUnit),
    },
  ];
}

/** Every demo tag, in a fixed order (its index keys the noise). */
export const DEMO_TAGS: readonly DemoTag[] = [
  ...DEMO_MACHINES.flatMap(machineTags),
  {
    name: 'SITE.TI-AMB',
    machine: undefined,
    unit: 'degC',
    noise: 0.1,
    decimals: 2,
    truth: (_m, t) => ambientTemperature(t) - 273.15,
  },
];

/** Flow and power noise are relative (fraction of reading); pressures and temperatures absolute. */
function isRelativeNoise(tag: DemoTag): boolean {
  return /\.(FI|JI)-/.test(tag.name);
}

/** The reading of tag `index` at time t, or undefined when the scenario has a gap there. */
export function demoReading(
  span: DemoSpan,
  index: number,
  t: number,
  truth: MachineTruth | undefined,
): number | undefined {
  const tag = DEMO_TAGS[index];
  if (tag === undefined) throw new Error(`no demo tag number ${index}`);
  const f = fraction(span, t);
  const step = Math.floor(t / 1000);
  // A 6-hour gap in all of gb-1's data.
  if (tag.machine === 'gb-1') {
    const gapFrom = span.start + 0.35 * (span.end - span.start);
    if (t >= gapFrom && t < gapFrom + 6 * HOUR) return undefined;
  }
  // bfp-1's discharge pressure transmitter sticks: it repeats the reading it had when it stuck.
  if (tag.name === 'BFP1.PI-20' && f >= 0.6 && f < 0.75) {
    const stuckAt = span.start + 0.6 * (span.end - span.start);
    const t0 = Math.floor(stuckAt / 60_000) * 60_000;
    return demoReading(
      { ...span, end: span.end },
      index,
      t0 - 60_000,
      machineTruth(span, 'bfp-1', t0 - 60_000),
    );
  }
  const exact = tag.truth(truth, t);
  const sigma = isRelativeNoise(tag) ? tag.noise * Math.abs(exact) : tag.noise;
  let value = exact + sigma * normal(index + 1, step, 7);
  if (tag.name === 'IDF2.TI-10' && f > 0.4) value += (4 * (Math.min(f, 1) - 0.4)) / 0.6;
  if (tag.name === 'GB1.PI-10' && f >= 0.8) value += DEMO_AMBIENT_PRESSURE / 1e5; // reads absolute, tag says gauge
  if (uniform(index + 101, step, 3) < 2e-5) value *= uniform(index + 201, step, 4) < 0.5 ? 0.75 : 1.25;
  const scale = 10 ** tag.decimals;
  return Math.round(value * scale) / scale;
}
