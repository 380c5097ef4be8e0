/**
 * Literals for statements sent by the simple query protocol, which carries several
 * statements in one round trip but no parameters (PostgreSQL 15 documentation, "Frontend/
 * Backend Protocol", "Simple Query"). Only validated integers, finite doubles and instants
 * are written this way, and they read back exactly: Number-to-String gives the shortest
 * decimal that reads back as the same double (ECMA-262, Number::toString), float8in
 * rounds correctly, and an ISO 8601 instant to the millisecond is exact in timestamptz.
 */

/** A double as text (String(-0) is "0", so negative zero is spelt out). */
export function floatText(v: number): string {
  return Object.is(v, -0) ? '-0' : String(v);
}

export function sqlFloat(v: number): string {
  return `'${floatText(v)}'::float8`;
}

/** [ms since epoch] */
export function sqlTime(ms: number): string {
  return `'${new Date(ms).toISOString()}'::timestamptz`;
}

/** An int4[] literal of already validated integers. */
export function sqlIntArray(v: readonly number[]): string {
  return `'{${v.join(',')}}'::int[]`;
}

export function sqlFloatArray(v: readonly number[]): string {
  return `'{${v.map(floatText).join(',')}}'::float8[]`;
}

/** ISO 8601 instants (no commas, braces, quotes or spaces, so no element quoting). */
export function sqlTimeArray(iso: readonly string[]): string {
  return `'{${iso.join(',')}}'::timestamptz[]`;
}
