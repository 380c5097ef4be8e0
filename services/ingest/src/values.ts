/**
 * Which numbers can be stored as samples. Finite is not enough: the store keeps a sum per
 * rollup bucket (minute, hour), and PostgreSQL refuses a float8 sum past the largest double
 * (about 1.8e308) with "value out of range: overflow", failing the whole batch, so one absurd
 * cell would hold back every good row written with it, retried for ever. A bound far below that
 * and far above any measurement keeps such a cell in quarantine instead.
 */

/**
 * Largest magnitude stored [tag unit]. 1e200 times the samples a bucket can hold (under 1e100)
 * is still a finite double; no plant quantity in any unit comes near it (common practice, no source).
 */
export const MAX_SAMPLE_MAGNITUDE = 1e200;

/** True when the value is finite and within ±MAX_SAMPLE_MAGNITUDE. */
export function isStorableValue(value: number): boolean {
  return Number.isFinite(value) && Math.abs(value) <= MAX_SAMPLE_MAGNITUDE;
}

/** Why a finite value beyond the bound is refused, for a quarantine reason or a push answer. */
export function tooLargeReason(text: string): string {
  return `${text} is beyond ±${MAX_SAMPLE_MAGNITUDE}, larger than any measurement; the store could not sum it`;
}
