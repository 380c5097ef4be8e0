/**
 * A float64 column seen as its raw bit pattern, two 32-bit halves per value: reading and writing
 * the halves keeps every pattern bit for bit (NaN payloads, -0, denormals), which a copy through
 * a JavaScript number does not promise for NaN.
 */

const littleEndian = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;
/** Index of the high (sign, exponent, top of mantissa) and low halves of value i at 2i + HI / LO. */
export const HI = littleEndian ? 1 : 0;
export const LO = littleEndian ? 0 : 1;

export function halves(values: Float64Array): Uint32Array {
  return new Uint32Array(values.buffer, values.byteOffset, values.length * 2);
}
