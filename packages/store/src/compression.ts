/**
 * Stored-sample compression, per tag, on write: deadband (exception) and swinging-door
 * trending (Bristol, "Swinging door trending: adaptive trend recording?", ISA 1990).
 * Pure: points in, kept points out. The deviation is the error bound and is recorded
 * per tag (tags.compression_deviation), in the tag's unit.
 *
 * Guarantees (asserted by compression.test.ts):
 * - deadband: every dropped point lies within `deviation` of the last kept value
 *   (sample-and-hold reconstruction);
 * - swinging door: every dropped point lies within `deviation` of the straight line
 *   between the kept points around it (linear reconstruction). Kept points are always
 *   received points, never synthesised values.
 */
import { StoreError } from './errors.js';

export interface Point {
  /** [ms since epoch] */
  readonly time: number;
  readonly value: number;
}

export interface Compressor {
  /** Feeds one point (strictly later than the previous); returns points to store now. */
  push(point: Point): Point[];
  /** Ends the stream: returns the points still held back. */
  end(): Point[];
}

function checkDeviation(deviation: number): void {
  if (!(deviation > 0) || !Number.isFinite(deviation)) {
    throw new StoreError(
      'STORE_BAD_REQUEST',
      `compression deviation must be a positive number, got ${deviation}`,
      {
        deviation,
      },
    );
  }
}

function checkOrder(previous: Point | undefined, point: Point): void {
  if (previous !== undefined && !(point.time > previous.time)) {
    throw new StoreError(
      'STORE_BAD_SAMPLE',
      `compression needs strictly increasing times: ${point.time} after ${previous.time} [ms]`,
      { time: point.time, previous: previous.time },
    );
  }
}

/** Keeps a point when it differs from the last kept value by more than `deviation`. */
export class DeadbandCompressor implements Compressor {
  private kept: Point | undefined;
  private last: Point | undefined;
  private lastKept = false;
  constructor(readonly deviation: number) {
    checkDeviation(deviation);
  }
  push(point: Point): Point[] {
    checkOrder(this.last, point);
    this.last = point;
    if (this.kept === undefined || Math.abs(point.value - this.kept.value) > this.deviation) {
      this.kept = point;
      this.lastKept = true;
      return [point];
    }
    this.lastKept = false;
    return [];
  }
  /** The final point is kept so the stored trend ends where the data ended. */
  end(): Point[] {
    const out = this.last !== undefined && !this.lastKept ? [this.last] : [];
    this.kept = undefined;
    this.last = undefined;
    return out;
  }
}

/**
 * Swinging door: from the last kept point (the pivot) each later point p allows line
 * slopes in [(p.v - d - a.v)/dt, (p.v + d - a.v)/dt]; while the intersection over the held
 * points is non-empty one line serves them all. When it empties, the latest held point
 * whose own slope lies inside the intersection of the points before it is kept, and
 * becomes the new pivot (checking the real point, rather than only the door angles,
 * is what makes the bound hold for received values).
 */
export class SwingingDoorCompressor implements Compressor {
  private pivot: Point | undefined;
  private held: Point[] = [];
  private last: Point | undefined;
  constructor(readonly deviation: number) {
    checkDeviation(deviation);
  }

  push(point: Point): Point[] {
    checkOrder(this.last, point);
    this.last = point;
    if (this.pivot === undefined) {
      this.pivot = point;
      return [point];
    }
    this.held.push(point);
    const out: Point[] = [];
    for (;;) {
      const scan = this.scan();
      if (scan.feasible) return out;
      out.push(this.keep(scan.lastGood));
    }
  }

  end(): Point[] {
    const out: Point[] = [];
    while (this.held.length > 0) {
      // The last point closes the stream only if one line from the pivot serves every held point.
      out.push(this.keep(this.scan().lastGood));
    }
    this.pivot = undefined;
    this.last = undefined;
    return out;
  }

  private keep(index: number): Point {
    const p = this.held[index]!;
    this.pivot = p;
    this.held = this.held.slice(index + 1);
    return p;
  }

  /** Walks the held points from the pivot: is one line possible, and the latest "good" point. */
  private scan(): { feasible: boolean; lastGood: number } {
    const a = this.pivot!;
    const d = this.deviation;
    let lo = Number.NEGATIVE_INFINITY;
    let hi = Number.POSITIVE_INFINITY;
    let lastGood = 0;
    for (let k = 0; k < this.held.length; k++) {
      const p = this.held[k]!;
      const dt = p.time - a.time;
      const slope = (p.value - a.value) / dt;
      if (slope >= lo && slope <= hi) lastGood = k;
      lo = Math.max(lo, (p.value - d - a.value) / dt);
      hi = Math.min(hi, (p.value + d - a.value) / dt);
      if (lo > hi) return { feasible: false, lastGood };
    }
    return { feasible: true, lastGood };
  }
}

export type CompressionMethod = 'deadband' | 'swinging-door';

export function createCompressor(method: CompressionMethod, deviation: number): Compressor {
  return method === 'deadband' ? new DeadbandCompressor(deviation) : new SwingingDoorCompressor(deviation);
}

/** Compresses a whole series at once (strictly increasing times). */
export function compressSeries(
  points: readonly Point[],
  method: CompressionMethod,
  deviation: number,
): Point[] {
  const c = createCompressor(method, deviation);
  const out: Point[] = [];
  for (const p of points) out.push(...c.push(p));
  out.push(...c.end());
  return out;
}
