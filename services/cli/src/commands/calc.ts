import { readFile } from 'node:fs/promises';
import { formatError } from '@isentrope/errors';
import {
  dryAir,
  evaluateMachineWithUncertainty,
  type Fluid,
  type FluidState,
  incompressibleLiquid,
  type MachineInput,
  type MachineKind,
  type MachineOutputUncertainty,
  type MachineResult,
  type MachineUncertainties,
  naturalGas,
  normalVolumeFlowToMassFlow,
  parseQuantity,
  ThermoError,
  toSI,
  UNCERTAIN_INPUTS,
  type UncertainInput,
  type UncertaintySpec,
  type UnitOptions,
  water,
} from '@isentrope/thermo';
import { z } from 'zod';
import { CLI_ERRORS, type CliErrorCode } from '../errors.js';

/**
 * `isentrope calc`: one machine case from a JSON file (or stdin) to its efficiency, work, power
 * and entropy generation with their uncertainty, as JSON (--json) or an aligned table.
 */

export interface CalcIo {
  readonly stdin: NodeJS.ReadableStream;
  readonly stdout: NodeJS.WritableStream;
  readonly stderr: NodeJS.WritableStream;
}

export const CAUTION =
  'Figures support, never replace, the judgement of qualified engineers; maintenance decisions rest with them; local codes and licensed practice prevail.';

const USAGE = `Usage: isentrope calc [--json] [case.json | -]

Reads one machine case (JSON) from the file, or from stdin when no file or "-" is given, and
prints efficiency, specific work, power and entropy generation with their standard uncertainty.

Case: {"machine": "turbine"|"compressor"|"pump"|"fan",
       "fluid": "water" | "air" | {"composition": {"CH4": 0.9, "C2H6": 0.1}, "model": "ideal"|"peng-robinson"}
                | {"liquid": {"density": "998 kg/m3", "cp": "4.18 kJ/kg/K"}},
       "ambient": "1.01325 bara" (needed for gauge pressures),
       "inlet": {"p": "40 barg", "T": "400 degC"}, "outlet": {"p": "0.5 bara", "T": "100 degC"},
       "massFlow": "12 t/h", "volumeFlow": "2 m3/s", "shaftPower": "2 MW",
       "electricalPower": "1.9 MW", "driverEfficiency": 0.97, "wetMargin": "2 K",
       "uncertainty": {"inlet.p": "0.5 %", "inlet.T": "1 K", "massFlow": {"percentOfSpan": 0.5, "span": "50 t/h"}}}
Pressures in mmH2O or inH2O (fan and draft tags) are gauge: they need "ambient".
An uncertainty "x %" is a percent of the reading; a quantity with a unit is absolute.
Exit codes: 0 done, 2 bad case, 1 unexpected failure.
`;

const quantity = z.string().min(1, 'must be a number with a unit, e.g. "40 barg"');
const pt = z.strictObject({ p: quantity, T: quantity });
const uncertaintyValue = z.union([
  quantity,
  z.strictObject({ percentOfSpan: z.number().nonnegative(), span: quantity }),
]);

const caseSchema = z.strictObject({
  machine: z.enum(['turbine', 'compressor', 'pump', 'fan']),
  fluid: z.union([
    z.enum(['water', 'air']),
    z.strictObject({
      composition: z.record(z.string(), z.number().nonnegative()),
      model: z.enum(['ideal', 'peng-robinson']),
    }),
    z.strictObject({ liquid: z.strictObject({ density: quantity, cp: quantity }) }),
  ]),
  ambient: quantity.optional(),
  inlet: pt,
  outlet: pt,
  massFlow: quantity.optional(),
  volumeFlow: quantity.optional(),
  shaftPower: quantity.optional(),
  electricalPower: quantity.optional(),
  driverEfficiency: z.union([z.number().positive().max(1), quantity]).optional(),
  wetMargin: quantity.optional(),
  uncertainty: z.partialRecord(z.enum(UNCERTAIN_INPUTS), uncertaintyValue).optional(),
});
export type CalcCase = z.infer<typeof caseSchema>;

/** A problem with the case, named by its path (e.g. "inlet.p"). */
export class CaseError extends Error {
  readonly code: CliErrorCode = 'CLI_BAD_CASE';
  constructor(readonly problems: readonly { readonly path: string; readonly message: string }[]) {
    super(
      formatError(CLI_ERRORS, 'CLI_BAD_CASE', {
        problems: problems.map((p) => `${p.path === '' ? '(case)' : p.path}: ${p.message}`).join('\n'),
      }),
    );
    this.name = 'CaseError';
  }
}

/** A refusal raised inside a conversion, reported at the conversion's path. */
class CaseErrorSignal extends ThermoError {
  readonly code = 'THERMO_BAD_INPUT';
  override readonly name = 'CaseErrorSignal';
}

/** Runs a conversion, turning thermo and unit errors into a problem at the given path. */
function at<T>(path: string, problems: { path: string; message: string }[], f: () => T): T | undefined {
  try {
    return f();
  } catch (error) {
    if (error instanceof ThermoError) {
      problems.push({ path, message: error.message });
      return undefined;
    }
    throw error;
  }
}

function makeFluid(
  spec: CalcCase['fluid'],
  problems: { path: string; message: string }[],
): Fluid | undefined {
  if (spec === 'water') return water;
  if (spec === 'air') return dryAir();
  if ('composition' in spec) {
    return at('fluid.composition', problems, () => naturalGas(spec.composition, spec.model));
  }
  const density = at('fluid.liquid.density', problems, () =>
    parseQuantity(spec.liquid.density, { dimension: 'density' }),
  );
  const cp = at('fluid.liquid.cp', problems, () =>
    parseQuantity(spec.liquid.cp, { dimension: 'specificEntropy' }),
  );
  if (density === undefined || cp === undefined) return undefined;
  return at('fluid.liquid', problems, () => incompressibleLiquid(density.valueSI, cp.valueSI));
}

/** A difference in SI from a quantity (an uncertainty or a margin): offsets and ambient cancel. */
function differenceSI(text: string, options: UnitOptions): number {
  const q = parseQuantity(text, options);
  return q.valueSI - toSI(0, q.unit, options);
}

/** Parses and converts the case; every problem is collected with its path. */
export function parseCase(raw: unknown): { input: MachineInput; uncertainties: MachineUncertainties } {
  const parsed = caseSchema.safeParse(raw);
  if (!parsed.success) {
    throw new CaseError(
      parsed.error.issues.map((i) => ({ path: i.path.map(String).join('.'), message: i.message })),
    );
  }
  const c = parsed.data;
  const problems: { path: string; message: string }[] = [];
  const ambient =
    c.ambient === undefined
      ? undefined
      : at('ambient', problems, () => {
          const q = parseQuantity(c.ambient!, { dimension: 'pressure' });
          if (q.gauge)
            throw new CaseErrorSignal('the ambient pressure must be absolute (e.g. "1.01325 bara")');
          return q.valueSI;
        });
  const unitOptions: UnitOptions = { ambientPressure: ambient };
  const fluid = makeFluid(c.fluid, problems);
  const num = (
    path: string,
    text: string | undefined,
    dimension: UnitOptions['dimension'],
  ): number | undefined =>
    text === undefined
      ? undefined
      : at(path, problems, () => parseQuantity(text, { ...unitOptions, dimension }).valueSI);
  /** A pressure [Pa] absolute; draft units (mmH2O, inH2O) are read as gauge pressures, as fan tags are. */
  const pressure = (path: string, text: string): number | undefined =>
    at(path, problems, () => {
      const q = parseQuantity(text, unitOptions);
      if (q.dimension === 'pressure') return q.valueSI;
      if (q.dimension === 'pressureDifference') {
        if (ambient === undefined) {
          throw new CaseErrorSignal(
            `"${text}" is a gauge (draft) pressure: give "ambient" to make it absolute`,
          );
        }
        return ambient + q.valueSI;
      }
      throw new CaseErrorSignal(`"${text}" is a ${q.dimension}, not a pressure`);
    });
  const inlet = { p: pressure('inlet.p', c.inlet.p), T: num('inlet.T', c.inlet.T, 'temperature') };
  const outlet = { p: pressure('outlet.p', c.outlet.p), T: num('outlet.T', c.outlet.T, 'temperature') };
  let massFlow: number | undefined;
  if (c.massFlow !== undefined) {
    massFlow = at('massFlow', problems, () => {
      const q = parseQuantity(c.massFlow!, unitOptions);
      if (q.dimension === 'massFlow') return q.valueSI;
      if (
        q.dimension === 'normalVolumeFlow' &&
        q.reference !== undefined &&
        fluid !== undefined &&
        'molarMass' in fluid
      ) {
        return normalVolumeFlowToMassFlow(q.valueSI, (fluid as { molarMass: number }).molarMass, q.reference);
      }
      throw new CaseErrorSignal(
        `"${c.massFlow}" is not a mass flow (kg/s, kg/h, t/h, lb/h; Nm3/h and Sm3/h for gases)`,
      );
    });
  }
  const volumeFlow = num('volumeFlow', c.volumeFlow, 'volumeFlow');
  const shaftPower = num('shaftPower', c.shaftPower, 'power');
  const electricalPower = num('electricalPower', c.electricalPower, 'power');
  const driverEfficiency =
    typeof c.driverEfficiency === 'string'
      ? num('driverEfficiency', c.driverEfficiency, 'fraction')
      : c.driverEfficiency;
  const wetMargin =
    c.wetMargin === undefined
      ? undefined
      : at('wetMargin', problems, () => differenceSI(c.wetMargin!, { dimension: 'temperature' }));

  const uncertainties: Partial<Record<UncertainInput, UncertaintySpec>> = {};
  for (const [key, value] of Object.entries(c.uncertainty ?? {}) as [
    UncertainInput,
    string | { percentOfSpan: number; span: string },
  ][]) {
    const path = `uncertainty.${key}`;
    const spec = at(path, problems, (): UncertaintySpec => {
      if (typeof value !== 'string') {
        return { kind: 'span', percent: value.percentOfSpan, span: differenceSI(value.span, unitOptions) };
      }
      const q = parseQuantity(value, unitOptions);
      if (q.unit === '%') return { kind: 'reading', percent: q.value };
      if (key === 'driverEfficiency' && q.dimension === 'fraction')
        return { kind: 'absolute', value: q.valueSI };
      const expected = UNCERTAINTY_DIMENSION[key];
      if (q.dimension !== expected && !(key === 'massFlow' && q.dimension === 'massFlow')) {
        throw new CaseErrorSignal(`"${value}" is not a ${expected} (or "x %" of the reading)`);
      }
      return { kind: 'absolute', value: differenceSI(value, unitOptions) };
    });
    if (spec !== undefined) uncertainties[key] = spec;
  }
  if (problems.length > 0 || fluid === undefined) throw new CaseError(problems);
  const input: MachineInput = {
    kind: c.machine as MachineKind,
    fluid,
    inlet: { p: inlet.p!, T: inlet.T! },
    outlet: { p: outlet.p!, T: outlet.T! },
    massFlow,
    volumeFlow,
    shaftPower,
    electricalPower,
    driverEfficiency,
    wetMargin,
  };
  return { input, uncertainties };
}

const UNCERTAINTY_DIMENSION: Readonly<Record<UncertainInput, string>> = {
  'inlet.p': 'pressure',
  'inlet.T': 'temperature',
  'outlet.p': 'pressure',
  'outlet.T': 'temperature',
  massFlow: 'massFlow',
  volumeFlow: 'volumeFlow',
  shaftPower: 'power',
  electricalPower: 'power',
  driverEfficiency: 'fraction',
};

// ----- output -----

/** Output fields: name, scale from SI to the printed unit, printed unit, label for the table. */
const FIELDS: readonly (readonly [
  keyof MachineOutputUncertainty & keyof MachineResult,
  number,
  string,
  string,
])[] = [
  ['isentropicEfficiency', 1, '', 'isentropic efficiency'],
  ['specificWork', 1e-3, 'kJ/kg', 'specific work'],
  ['isentropicSpecificWork', 1e-3, 'kJ/kg', 'isentropic specific work'],
  ['power', 1e-3, 'kW', 'power (fluid)'],
  ['entropyGeneration', 1e-3, 'kJ/kg/K', 'entropy generation'],
  ['massFlow', 1, 'kg/s', 'mass flow'],
  ['polytropicEfficiency', 1, '', 'polytropic efficiency'],
  ['polytropicHead', 1e-3, 'kJ/kg', 'polytropic head'],
  ['head', 1, 'm', 'head'],
  ['hydraulicPower', 1e-3, 'kW', 'hydraulic power'],
  ['hydraulicEfficiency', 1, '', 'hydraulic efficiency'],
  ['thermodynamicEfficiency', 1, '', 'thermodynamic efficiency (ISO 5198)'],
  ['airPower', 1e-3, 'kW', 'fan air power'],
  ['fanEfficiency', 1, '', 'fan efficiency'],
];

const EXTRA: readonly (readonly [keyof MachineResult, number, string, string])[] = [
  ['shaftPowerUsed', 1e-3, 'kW', 'shaft power'],
  ['polytropicExponent', 1, '', 'polytropic exponent n'],
  ['schultzFactor', 1, '', 'Schultz factor f'],
  ['fanPressureRise', 1, 'Pa', 'fan pressure rise'],
  ['compressibilityCoefficient', 1, '', 'compressibility coefficient k_p'],
];

const finiteOrNull = (v: number): number | null => (Number.isFinite(v) ? v : null);

function stateJson(st: FluidState): Record<string, number | null> {
  const out: Record<string, number | null> = {
    p: finiteOrNull(st.p),
    T: finiteOrNull(st.T),
    h: finiteOrNull(st.h / 1e3),
    s: finiteOrNull(st.s / 1e3),
  };
  if (st.x !== undefined) out.quality = finiteOrNull(st.x);
  return out;
}

export function resultJson(
  fluid: Fluid,
  result: MachineResult,
  uncertainty: MachineOutputUncertainty,
): Record<string, unknown> {
  const out: Record<string, unknown> = { machine: result.kind, fluid: fluid.name };
  const units: Record<string, string> = {};
  for (const [key, scale, unit] of [...FIELDS, ...EXTRA]) {
    const v = result[key];
    if (typeof v === 'number' && Number.isFinite(v)) {
      out[key === 'shaftPowerUsed' ? 'shaftPower' : key] = v * scale;
      units[key === 'shaftPowerUsed' ? 'shaftPower' : key] = unit === '' ? '1' : unit;
    }
  }
  out.inlet = stateJson(result.inlet);
  out.outlet = stateJson(result.outlet);
  out.outletIsentropic = stateJson(result.outletIsentropic);
  const u: Record<string, number> = {};
  for (const [key, scale] of FIELDS) {
    const v = uncertainty[key];
    if (v !== undefined && Number.isFinite(v)) u[key] = v * scale;
  }
  out.uncertainty = u;
  out.units = {
    ...units,
    p: 'Pa',
    T: 'K',
    h: 'kJ/kg',
    s: 'kJ/kg/K',
    uncertainty: 'standard uncertainty (k = 1), same units',
  };
  out.flags = [...result.flags];
  out.valid = result.valid;
  out.caution = CAUTION;
  return out;
}

function fmt(v: number): string {
  if (!Number.isFinite(v)) return '-';
  const a = Math.abs(v);
  if (a !== 0 && (a >= 1e6 || a < 1e-3)) return v.toExponential(4);
  return v
    .toPrecision(6)
    .replace(/(\.\d*?)0+$/, '$1')
    .replace(/\.$/, '');
}

/** Uncertainties with two significant digits: more would claim knowledge of the uncertainty we lack (GUM 7.2.6). */
function fmtU(v: number): string {
  return Number.isFinite(v) ? String(Number(v.toPrecision(2))) : '-';
}

export function resultTable(
  fluid: Fluid,
  result: MachineResult,
  uncertainty: MachineOutputUncertainty,
): string {
  const rows: [string, string, string, string][] = [];
  for (const [key, scale, unit, label] of FIELDS) {
    const v = result[key];
    if (typeof v !== 'number' || !Number.isFinite(v)) continue;
    const u = uncertainty[key];
    rows.push([label, fmt(v * scale), u === undefined ? '' : `± ${fmtU(u * scale)}`, unit]);
  }
  for (const [key, scale, unit, label] of EXTRA) {
    const v = result[key];
    if (typeof v === 'number' && Number.isFinite(v)) rows.push([label, fmt(v * scale), '', unit]);
  }
  const w0 = Math.max(...rows.map((r) => r[0].length));
  const w1 = Math.max(...rows.map((r) => r[1].length));
  const w2 = Math.max(...rows.map((r) => r[2].length));
  const lines = [`${result.kind}, ${fluid.name}`];
  for (const [a, b, c, d] of rows) {
    lines.push(`  ${a.padEnd(w0)}  ${b.padStart(w1)}  ${c.padEnd(w2)}  ${d}`.trimEnd());
  }
  const state = (name: string, st: FluidState): string =>
    `  ${name.padEnd(20)}p ${fmt(st.p / 1e5)} bar(a), T ${fmt(st.T - 273.15)} degC, h ${fmt(st.h / 1e3)} kJ/kg, ` +
    `s ${fmt(st.s / 1e3)} kJ/kg/K${st.x === undefined ? '' : `, quality ${fmt(st.x)}`}`;
  lines.push(
    state('inlet', result.inlet),
    state('outlet', result.outlet),
    state('outlet, isentropic', result.outletIsentropic),
  );
  lines.push(`  flags: ${result.flags.length === 0 ? 'none' : result.flags.join(', ')}`);
  lines.push(
    `  valid: ${result.valid ? 'yes' : 'NO (instrument fault or undetermined state: do not trend)'}`,
  );
  lines.push('  uncertainties are standard uncertainties (k = 1)');
  lines.push('', CAUTION, '');
  return lines.join('\n');
}

async function readAll(stream: NodeJS.ReadableStream): Promise<string> {
  const chunks: Buffer[] = [];
  for await (const chunk of stream)
    chunks.push(typeof chunk === 'string' ? Buffer.from(chunk) : (chunk as Buffer));
  return Buffer.concat(chunks).toString('utf8');
}

/** Runs `isentrope calc`; resolves to the exit code (0 done, 2 bad case, 1 unexpected failure). */
export async function runCalc(args: string[], io: CalcIo): Promise<number> {
  let json = false;
  let file: string | undefined;
  for (const arg of args) {
    if (arg === '--json') json = true;
    else if (arg === '--help' || arg === '-h') {
      io.stdout.write(USAGE);
      return 0;
    } else if (arg.startsWith('-') && arg !== '-') {
      io.stderr.write(`isentrope calc: unknown option "${arg}"\n\n${USAGE}`);
      return 2;
    } else if (file === undefined) file = arg;
    else {
      io.stderr.write(`isentrope calc: one case file only, got "${file}" and "${arg}"\n`);
      return 2;
    }
  }
  let text: string;
  try {
    text = file === undefined || file === '-' ? await readAll(io.stdin) : await readFile(file, 'utf8');
  } catch (error) {
    io.stderr.write(`isentrope calc: cannot read ${file ?? 'stdin'}: ${(error as Error).message}\n`);
    return 2;
  }
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (error) {
    io.stderr.write(`isentrope calc: the case is not valid JSON: ${(error as Error).message}\n`);
    return 2;
  }
  try {
    const { input, uncertainties } = parseCase(raw);
    const { result, uncertainty } = evaluateMachineWithUncertainty(input, uncertainties);
    io.stdout.write(
      json
        ? `${JSON.stringify(resultJson(input.fluid, result, uncertainty), null, 2)}\n`
        : resultTable(input.fluid, result, uncertainty),
    );
    return 0;
  } catch (error) {
    if (error instanceof CaseError) {
      io.stderr.write(`isentrope calc: bad case:\n${error.message.replace(/^/gm, '  ')}\n`);
      return 2;
    }
    if (error instanceof ThermoError) {
      // BadInputError messages start with the field (e.g. "outlet.p: ...").
      io.stderr.write(`isentrope calc: bad case:\n  ${error.message}\n`);
      return 2;
    }
    io.stderr.write(`isentrope calc: failed: ${error instanceof Error ? error.message : String(error)}\n`);
    return 1;
  }
}
