/**
 * Codec benchmarks, one core: encode and decode rates [samples/s] and bytes per sample on
 * (a) a demo-like plant day (43 tags at 1 minute, each tag's reading rounded to its transmitter's
 * decimals as services/demo/src/scenario.ts does: Math.round(v * 10^d) / 10^d, with its noise
 * levels; one block per tag and day) and (b) one day of a 1 s reading with transmitter noise at
 * 4 decimals, one block per tag and day, with exact and with jittered (±2 ms) time stamps.
 * Also the Gorilla XOR value section alone on the same data, to show what decimal scaling saves.
 * Data are invented (smooth signals plus Gaussian noise). Best of several rounds, since the host
 * is shared; the host load average is printed because every rate here is wall time.
 */
import { loadavg } from 'node:os';
import { BitWriter } from '../src/bits.js';
import { decodeBlock, encodeBlock } from '../src/block.js';
import type { SampleColumns } from '../src/columns.js';
import { seeded } from '../src/testing.js';
import { encodeXor, XOR_MAX_BITS_PER_VALUE } from '../src/xor-values.js';

function emit(bench: string, value: number, unit: string): void {
  console.log(JSON.stringify({ bench, value: Number(value.toPrecision(4)), unit }));
}

const random = seeded(2015);
function gaussian(): number {
  return Math.sqrt(-2 * Math.log(1 - random())) * Math.cos(2 * Math.PI * random());
}

const START_US = 1_767_225_600_000_000; // 2026-01-01T00:00Z [µs]

/** One tag: level, noise [tag unit, or fraction of reading when relative] and decimals. */
interface TagShape {
  readonly level: number;
  readonly noise: number;
  readonly relative: boolean;
  readonly decimals: number;
}

/** The demo's six tags a machine (inlet/outlet pressure and temperature, flow, power), plus ambient. */
function demoShapes(): TagShape[] {
  const shapes: TagShape[] = [];
  for (let m = 0; m < 7; m++) {
    const turbine = m === 0;
    const pressureNoise = m >= 5 ? 0.3 : turbine ? 0.03 : 0.02;
    shapes.push({ level: 10 + 30 * random(), noise: pressureNoise, relative: false, decimals: 3 });
    shapes.push({ level: 20 + 400 * random(), noise: 0.1, relative: false, decimals: 2 });
    shapes.push({ level: 1 + 90 * random(), noise: pressureNoise, relative: false, decimals: 3 });
    shapes.push({ level: 20 + 200 * random(), noise: 0.1, relative: false, decimals: 2 });
    shapes.push({ level: 100 + 5000 * random(), noise: 0.005, relative: true, decimals: 2 });
    shapes.push({
      level: turbine ? 25 : 300 + 2000 * random(),
      noise: 0.003,
      relative: true,
      decimals: turbine ? 4 : 2,
    });
  }
  shapes.push({ level: 15, noise: 0.1, relative: false, decimals: 2 });
  return shapes;
}

function series(shape: TagShape, n: number, stepUs: number, jitterUs: number): SampleColumns {
  const times = new Float64Array(n);
  const values = new Float64Array(n);
  const scale = 10 ** shape.decimals;
  const phase = random() * 6.28;
  for (let i = 0; i < n; i++) {
    times[i] = START_US + i * stepUs + (jitterUs === 0 ? 0 : Math.round((random() - 0.5) * 2 * jitterUs));
    const exact = shape.level * (1 + 0.05 * Math.sin(phase + (i * stepUs) / 3.6e9 / 4));
    const sigma = shape.relative ? shape.noise * exact : shape.noise;
    values[i] = Math.round((exact + sigma * gaussian()) * scale) / scale;
  }
  return { times, values, qualities: new Int16Array(n).fill(192) };
}

/** Best rate [samples/s] of `rounds` runs of f over all blocks, each run at least 0.3 s. */
function bestRate(blocks: readonly SampleColumns[], f: (i: number) => void, rounds = 5): number {
  const samples = blocks.reduce((s, b) => s + b.times.length, 0);
  let best = 0;
  for (let round = 0; round < rounds; round++) {
    let done = 0;
    const t0 = performance.now();
    let elapsed = 0;
    while (elapsed < 300) {
      for (let i = 0; i < blocks.length; i++) f(i);
      done += samples;
      elapsed = performance.now() - t0;
    }
    best = Math.max(best, done / (elapsed / 1000));
  }
  return best;
}

function report(name: string, blocks: readonly SampleColumns[]): void {
  const samples = blocks.reduce((s, b) => s + b.times.length, 0);
  const encoded = blocks.map(encodeBlock);
  const bytes = encoded.reduce((s, b) => s + b.length, 0);
  emit(`codec.${name}.bytes_per_sample`, bytes / samples, 'B/sample');
  const xor = new BitWriter(0);
  let xorBits = 0;
  for (const b of blocks) {
    xor.reset(64 + XOR_MAX_BITS_PER_VALUE * b.values.length);
    encodeXor(b.values, xor, Number.POSITIVE_INFINITY);
    xorBits += xor.bitLength();
  }
  emit(`codec.${name}.xor_value_bytes_per_sample`, xorBits / 8 / samples, 'B/sample');
  emit(
    `codec.${name}.encode`,
    bestRate(blocks, (i) => encodeBlock(blocks[i]!)),
    'samples/s',
  );
  emit(
    `codec.${name}.decode`,
    bestRate(blocks, (i) => decodeBlock(encoded[i]!)),
    'samples/s',
  );
}

emit('codec.host.loadavg_1min_at_start', loadavg()[0] ?? 0, 'load');
report(
  'demo_1min_day',
  demoShapes().map((shape) => series(shape, 1440, 60_000_000, 0)),
);
const transmitter: TagShape = { level: 12.3456, noise: 0.002, relative: false, decimals: 4 };
const day = series(transmitter, 86_400, 1_000_000, 0);
report('noisy_1s_4dec_day', [day]);
report('noisy_1s_4dec_day_jitter2ms', [series(transmitter, 86_400, 1_000_000, 2000)]);
// The same day with values not rounded at all: every value a full-precision double, so Gorilla XOR.
report('unrounded_1s_day', [{ ...day, values: day.values.map((v, i) => v + Math.sin(i) * 1e-3) }]);
emit('codec.host.loadavg_1min_at_end', loadavg()[0] ?? 0, 'load');
