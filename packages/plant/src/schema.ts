/**
 * The plant model: sites, machines, tags and sources, as zod schemas so a plant file is
 * checked in one place and every consumer gets the same typed, validated object.
 */
import { z } from 'zod';
import { acceptedUnits, parseQuantity, type UnitDimension, unitDimension } from './units.js';

/** Lower-case identifier used in URLs and the database: letters, digits, hyphens. */
export const slugSchema = z
  .string()
  .regex(/^[a-z0-9][a-z0-9-]{0,62}$/, 'expected a slug: lower-case letters, digits and "-", at most 63 long');

function isTimeZone(zone: string): boolean {
  try {
    new Intl.DateTimeFormat('en', { timeZone: zone });
    return true;
  } catch {
    return false;
  }
}

const timeZoneSchema = z.string().refine(isTimeZone, {
  error: (issue) =>
    `unknown time zone ${JSON.stringify(issue.input)}; use an IANA name such as "Europe/Berlin"`,
});

function unitMessage(unit: string, dims: readonly UnitDimension[]): string {
  const found = unitDimension(unit);
  const list = acceptedUnits(dims).join(', ');
  return found === undefined
    ? `unknown unit ${JSON.stringify(unit)}; accepted: ${list}`
    : `unit ${JSON.stringify(unit)} measures ${found}, expected ${dims.join(' or ')}; accepted: ${list}`;
}

/** A quantity string ("1.013 bara") whose unit measures one of the given dimensions. */
function quantitySchema(dims: readonly UnitDimension[]) {
  return z.string().transform((text, ctx) => {
    const q = parseQuantity(text);
    if (q === undefined) {
      ctx.addIssue({
        code: 'custom',
        message: `expected a number and a unit, e.g. "12 MW"; got ${JSON.stringify(text)}`,
      });
      return z.NEVER;
    }
    const dim = unitDimension(q.unit);
    if (dim === undefined || !dims.includes(dim)) {
      ctx.addIssue({ code: 'custom', message: unitMessage(q.unit, dims) });
      return z.NEVER;
    }
    return { value: q.value, unit: q.unit, text };
  });
}

/** ISO 8601 instant with an explicit offset or Z, so a reference period is never ambiguous. */
const instantSchema = z.union([z.iso.datetime({ offset: true }), z.iso.date()], {
  error: 'expected an ISO 8601 date ("2026-01-01") or instant with offset ("2026-01-01T00:00:00Z")',
});

/** A duration as seconds, or a string "90s", "15m", "2h", "1d"; normalised to seconds. */
const durationSchema = z.union([z.number().nonnegative(), z.string()]).transform((v, ctx) => {
  if (typeof v === 'number') return v;
  const m = /^(\d+(?:\.\d+)?)\s*(s|m|h|d)$/.exec(v.trim());
  if (m === null || m[1] === undefined || m[2] === undefined) {
    ctx.addIssue({
      code: 'custom',
      message: `expected a duration like "90s", "15m", "2h" or "1d"; got ${JSON.stringify(v)}`,
    });
    return z.NEVER;
  }
  const factor = { s: 1, m: 60, h: 3600, d: 86400 }[m[2] as 's' | 'm' | 'h' | 'd'];
  return Number(m[1]) * factor;
});

export const siteSchema = z
  .strictObject({
    id: slugSchema,
    name: z.string().min(1),
    timeZone: timeZoneSchema,
    /** Fixed ambient pressure, absolute, e.g. "1.013 bara"; or a barometer tag below. */
    ambientPressure: quantitySchema(['pressure']).optional(),
    /** Name of a tag with role ambientPressure. */
    barometerTag: z.string().min(1).optional(),
    /** Elevation above sea level [m]. */
    elevation: z.number().min(-500).max(6000).optional(),
  })
  .refine((s) => !(s.ambientPressure !== undefined && s.barometerTag !== undefined), {
    error: 'give either ambientPressure or barometerTag, not both',
  });

export const fluidSchema = z.union([
  z.literal('water'),
  z.literal('air'),
  z.strictObject({
    /** Mole fractions by species name (NASA polynomial names, e.g. CH4, N2, CO2). */
    composition: z
      .record(z.string().min(1), z.number().min(0).max(1))
      .refine((c) => Math.abs(Object.values(c).reduce((a, b) => a + b, 0) - 1) <= 1e-4, {
        error: (issue) => `mole fractions must sum to 1 (within 1e-4); they sum to ${sumOf(issue.input)}`,
      }),
    model: z.enum(['ideal', 'peng-robinson']),
  }),
  z.strictObject({
    liquid: z.strictObject({
      /** Density [kg/m3]. */
      density: z.number().positive(),
      /** Specific heat capacity [J/(kg K)]. */
      cp: z.number().positive(),
    }),
  }),
]);

function sumOf(input: unknown): number {
  if (typeof input !== 'object' || input === null) return Number.NaN;
  return Object.values(input).reduce<number>((a, b) => a + (typeof b === 'number' ? b : Number.NaN), 0);
}

export const machineKinds = ['turbine', 'compressor', 'pump', 'fan'] as const;

export const ratingsSchema = z.strictObject({
  ratedPower: quantitySchema(['power']).optional(),
  ratedFlow: quantitySchema(['massFlow', 'volumeFlow', 'normalVolumeFlow']).optional(),
  ratedSpeed: quantitySchema(['speed']).optional(),
  ratedInletPressure: quantitySchema(['pressure', 'gaugePressure']).optional(),
  ratedOutletPressure: quantitySchema(['pressure', 'gaugePressure']).optional(),
});

export const baselineSchema = z
  .strictObject({
    /** What the baseline efficiency is a function of. */
    operatingPoint: z.enum(['load', 'massFlow', 'pressureRatio']),
    reference: z.strictObject({ from: instantSchema, to: instantSchema }),
    /** Polynomial degree of the fit in the operating point. */
    degree: z.number().int().min(0).max(3).default(2),
  })
  .refine((b) => Date.parse(b.reference.from) < Date.parse(b.reference.to), {
    error: 'reference.from must be before reference.to',
    path: ['reference'],
  });

export const bandsSchema = z
  .strictObject({
    /** Drop below baseline that raises a warning [points of efficiency, 1 = 1 %-point]. */
    warning: z.number().positive(),
    /** Drop below baseline that raises an alarm [points of efficiency]. */
    alarm: z.number().positive(),
    /** Time beyond a limit before the alert raises [s]. */
    onDelay: durationSchema.default(900),
    /** Time back inside before it clears [s]. */
    offDelay: durationSchema.default(900),
    /** Hysteresis on return [points of efficiency]. */
    deadband: z.number().nonnegative().default(0.5),
    /** Fraction of the window with valid steady-state results needed to judge (0..1). */
    minCoverage: z.number().min(0).max(1).default(0.5),
    severity: z.enum(['low', 'medium', 'high', 'urgent']).default('medium'),
    /** Raise only when the drop exceeds the result's expanded uncertainty. */
    requireBeyondUncertainty: z.boolean().default(true),
  })
  .refine((b) => b.alarm > b.warning, { error: 'alarm must be a larger drop than warning', path: ['alarm'] });

/** Role a tag plays for its machine, and the dimensions its unit may measure. */
export const TAG_ROLE_DIMENSIONS = {
  inletPressure: ['pressure', 'gaugePressure'],
  inletTemperature: ['temperature'],
  outletPressure: ['pressure', 'gaugePressure'],
  outletTemperature: ['temperature'],
  differentialPressure: ['pressureDifference', 'pressure', 'gaugePressure'],
  massFlow: ['massFlow'],
  volumeFlow: ['volumeFlow', 'normalVolumeFlow'],
  shaftPower: ['power'],
  electricalPower: ['power'],
  speed: ['speed'],
  ambientPressure: ['pressure'],
  ambientTemperature: ['temperature'],
  relativeHumidity: ['fraction'],
  valvePosition: ['fraction'],
  other: [
    'pressure',
    'gaugePressure',
    'pressureDifference',
    'temperature',
    'massFlow',
    'volumeFlow',
    'normalVolumeFlow',
    'power',
    'speed',
    'fraction',
    'length',
  ],
} as const satisfies Record<string, readonly UnitDimension[]>;

export type TagRole = keyof typeof TAG_ROLE_DIMENSIONS;
export const tagRoles = Object.keys(TAG_ROLE_DIMENSIONS) as [TagRole, ...TagRole[]];

export const uncertaintySchema = z.union(
  [
    z.strictObject({ absolute: z.number().nonnegative() }),
    z.strictObject({ percentOfReading: z.number().nonnegative().max(100) }),
    z.strictObject({ percentOfSpan: z.number().nonnegative().max(100), span: z.number().positive() }),
  ],
  { error: 'expected {absolute}, {percentOfReading} or {percentOfSpan, span} (in the tag unit)' },
);

const tagFields = {
  /** The name the plant writes (CSV header, OPC UA display name). */
  name: z.string().min(1).max(200),
  description: z.string().optional(),
  role: z.enum(tagRoles),
  unit: z.string(),
  /** Standard uncertainty of the instrument, in the tag unit. */
  uncertainty: uncertaintySchema.optional(),
  /** Readings outside are flagged invalid (in the tag unit). */
  validRange: z
    .strictObject({ min: z.number(), max: z.number() })
    .refine((r) => r.min < r.max, { error: 'validRange.min must be below validRange.max' })
    .optional(),
  /** Compression on write; deviation is the error bound in the tag unit. */
  compression: z
    .strictObject({ method: z.enum(['deadband', 'swinging-door']), deviation: z.number().positive() })
    .optional(),
  opcua: z.strictObject({ endpoint: z.string().min(1), nodeId: z.string().min(1) }).optional(),
};

function checkUnit(tag: { role: TagRole; unit: string }, ctx: z.RefinementCtx): void {
  const dims = TAG_ROLE_DIMENSIONS[tag.role];
  const dim = unitDimension(tag.unit);
  if (dim === undefined || !(dims as readonly UnitDimension[]).includes(dim)) {
    ctx.addIssue({ code: 'custom', message: unitMessage(tag.unit, dims), path: ['unit'] });
  }
}

/** A tag listed at top level; `machine` absent for site tags (barometer, ambient). */
export const tagSchema = z
  .strictObject({ ...tagFields, machine: slugSchema.optional() })
  .superRefine(checkUnit);
/** A tag nested under its machine. */
export const machineTagSchema = z.strictObject(tagFields).superRefine(checkUnit);

export const machineSchema = z.strictObject({
  id: slugSchema,
  name: z.string().min(1),
  kind: z.enum(machineKinds),
  fluid: fluidSchema,
  ratings: ratingsSchema.default({}),
  /** Efficiency of the generator (turbine) or motor/gearbox (driven machine), 0..1. */
  driverEfficiency: z.number().gt(0).max(1).optional(),
  outOfService: z.boolean().default(false),
  /** Tags whose steadiness decides the machine's steady state. */
  keyTags: z.array(z.string().min(1)).default([]),
  baseline: baselineSchema.optional(),
  bands: bandsSchema.optional(),
  tags: z.array(machineTagSchema).default([]),
});

export const sourceSchema = z.discriminatedUnion('kind', [
  z.strictObject({
    kind: z.literal('csv'),
    id: slugSchema,
    folder: z.string().min(1),
    /** File name glob, e.g. "*.csv". */
    pattern: z.string().default('*.csv'),
    /** long: time,tag,value rows; wide: one column per tag. */
    layout: z.enum(['long', 'wide']).default('wide'),
    /** Zone of timestamps without offset; defaults to the site's. */
    timeZone: timeZoneSchema.optional(),
    /** Field delimiter, e.g. ";" (default ","). */
    delimiter: z.string().min(1).max(4).optional(),
    /** Values written "12,5": the comma is the decimal mark. */
    decimalComma: z.boolean().optional(),
    /** Column header as the file writes it -> tag name, for files whose headers differ. */
    aliases: z.record(z.string().min(1), z.string().min(1)).optional(),
    /** Wide files: the line after the header gives each column's unit (checked against the tag's). */
    unitsRow: z.boolean().optional(),
    /** Time formats tried in order on each file's first timestamp: iso, ymd, dmy, mdy12, mdy, epoch-s, epoch-ms, or a luxon format such as "dd.MM.yyyy HH:mm". */
    timeFormats: z.array(z.string().min(1)).min(1).optional(),
    /** The repeated daylight-saving hour: resolved by row order (default) or quarantined. */
    ambiguousTime: z.enum(['order', 'quarantine']).optional(),
  }),
  z.strictObject({
    kind: z.literal('opcua'),
    id: slugSchema,
    endpoint: z.string().regex(/^opc\.tcp:\/\//, 'expected an endpoint URL starting with opc.tcp://'),
    /** Sampling interval [s]. */
    samplingInterval: z.number().positive().default(1),
    /** Subscription publishing interval [s]; default the sampling interval. */
    publishingInterval: z.number().positive().optional(),
    securityMode: z.enum(['None', 'Sign', 'SignAndEncrypt']).default('None'),
    securityPolicy: z
      .enum(['None', 'Basic256Sha256', 'Aes128_Sha256_RsaOaep', 'Aes256_Sha256_RsaPss'])
      .optional(),
    /** The client's own certificate and private key (PEM), for Sign and SignAndEncrypt. */
    certificateFile: z.string().min(1).optional(),
    privateKeyFile: z.string().min(1).optional(),
    /** Sign in with a user name; the password is read from the environment variable named here. */
    userName: z.string().min(1).optional(),
    passwordEnv: z
      .string()
      .regex(/^[A-Z_][A-Z0-9_]*$/, 'expected the name of an environment variable, e.g. OPCUA_PASSWORD')
      .optional(),
  }),
]);

/** The plant file as written (machines may nest their tags). */
export const plantFileInputSchema = z.strictObject({
  version: z.literal(1),
  site: siteSchema,
  machines: z.array(machineSchema).default([]),
  tags: z.array(tagSchema).default([]),
  sources: z.array(sourceSchema).default([]),
});

export type Site = z.output<typeof siteSchema>;
export type FluidSpec = z.output<typeof fluidSchema>;
export type MachineKind = (typeof machineKinds)[number];
export type Ratings = z.output<typeof ratingsSchema>;
export type BaselineSpec = z.output<typeof baselineSchema>;
export type BandsSpec = z.output<typeof bandsSchema>;
export type TagUncertainty = z.output<typeof uncertaintySchema>;
export type Source = z.output<typeof sourceSchema>;
/** A machine as held in a PlantFile: its tags are in PlantFile.tags. */
export type Machine = Omit<z.output<typeof machineSchema>, 'tags'>;
/** A tag as held in a PlantFile: machine is the owning machine id, or undefined for a site tag. */
export type Tag = z.output<typeof tagSchema>;

/** A validated plant file with every tag in one list. */
export interface PlantFile {
  readonly version: 1;
  readonly site: Site;
  readonly machines: readonly Machine[];
  readonly tags: readonly Tag[];
  readonly sources: readonly Source[];
}
