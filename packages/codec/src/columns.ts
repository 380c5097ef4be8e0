import { CodecError } from './errors.js';

/** One tag's samples, column by column, in time order. */
export interface SampleColumns {
  /** [µs since epoch], integers (Number.isSafeInteger), non-decreasing; equal times allowed. */
  readonly times: Float64Array;
  /** Any float64 bit pattern, kept bit for bit (NaN payloads, -0, denormals, infinities). */
  readonly values: Float64Array;
  /** The smallint quality as stored. */
  readonly qualities: Int16Array;
}

function badInput(message: string, details: Record<string, unknown>): CodecError {
  return new CodecError('CODEC_BAD_INPUT', message, details);
}

/** Throws CODEC_BAD_INPUT unless the columns are typed arrays of one length with sorted safe times. */
export function checkColumns(columns: SampleColumns): void {
  const { times, values, qualities } = columns;
  if (
    !(times instanceof Float64Array) ||
    !(values instanceof Float64Array) ||
    !(qualities instanceof Int16Array)
  ) {
    throw badInput(
      'Sample columns must be a Float64Array of times and values and an Int16Array of qualities.',
      {
        times: times?.constructor?.name,
        values: values?.constructor?.name,
        qualities: qualities?.constructor?.name,
      },
    );
  }
  const n = times.length;
  if (values.length !== n || qualities.length !== n) {
    throw badInput(
      `Sample columns differ in length (times ${n}, values ${values.length}, qualities ${qualities.length}); give one entry per sample in each.`,
      { times: n, values: values.length, qualities: qualities.length },
    );
  }
  let previous = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < n; i++) {
    const t = times[i]!;
    if (!Number.isSafeInteger(t)) {
      throw badInput(`Time at index ${i} (${t}) is not a safe integer of µs; round times to whole µs.`, {
        index: i,
        time: t,
      });
    }
    if (t < previous) {
      throw badInput(
        `Time at index ${i} (${t} µs) is earlier than the one before (${previous} µs); sort the samples by time.`,
        { index: i, time: t, previous },
      );
    }
    previous = t;
  }
}
