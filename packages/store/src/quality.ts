/**
 * Sample quality codes as stored: the OPC DA quality byte, as services/ingest writes it
 * (OPC Foundation, Data Access Custom Interface Standard 3.0, section 6.8 "OPC Quality
 * flags"): bits 7-6 are the quality (11 good, 01 uncertain, 00 bad; 10 is not used by the
 * standard and is read here as bad), bits 5-2 the substatus, bits 1-0 the limit.
 */

/** Good, no substatus (0xC0). The column default of samples.quality. */
export const QUALITY_GOOD = 192;
/** Uncertain, no substatus (0x40). */
export const QUALITY_UNCERTAIN = 64;
/** Bad, no substatus (0x00). */
export const QUALITY_BAD = 0;

export type QualityClass = 'good' | 'uncertain' | 'bad';

/**
 * The class of a stored quality code from its bits 7-6. Bits above 7 (vendor-specific in
 * OPC DA's 16-bit word) do not change the class. A negative or non-integer code is not an
 * OPC DA quality and counts as bad, so it never passes for good data.
 */
export function qualityClass(code: number): QualityClass {
  if (!Number.isInteger(code) || code < 0) return 'bad';
  const bits = code & 0xc0;
  if (bits === 0xc0) return 'good';
  if (bits === 0x40) return 'uncertain';
  return 'bad';
}
