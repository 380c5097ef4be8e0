/**
 * Monitoring benchmarks (run with `npx tsx packages/monitor/bench/monitor.bench.ts`):
 * - align + validate + steady state on one year of 1-minute data for one machine with 6 tags
 *   (samples every 60 s with +-5 s jitter, invented values), in grid points per second;
 * - Theil-Sen slope with Sen's interval on 365 daily points, in evaluations per second;
 * - gauge/absolute step detector on one year of 1-minute readings of one pressure tag (17 bar(a),
 *   invented, with a +1 atmosphere step at 80 %), in points per second.
 * Rates are per CPU-second of this process (the machine is shared). One JSON line per figure.
 */
import { alignTags, type TagColumns } from '../src/align.js';
import { theilSen } from '../src/degradation.js';
import { detectGaugeAbsoluteStep } from '../src/instrument/index.js';
import { detectSteadyState } from '../src/steady-state.js';
import { seededNormal, seededRandom } from '../src/synthetic.js';
import { validateAligned } from '../src/validate.js';

const MIN = 60_000;
const start = Date.UTC(2026, 0, 1);
const points = 365 * 1440;
const rnd = seededRandom(1);
const z = seededNormal(2);

const roles = ['p_in', 'T_in', 'p_out', 'T_out', 'flow', 'power'] as const;
const means = [40e5, 700, 5e5, 450, 50, 40e6];
const sds = [2e3, 0.3, 500, 0.3, 0.1, 5e4];
const tags: TagColumns[] = roles.map((role, k) => {
  const t = new Float64Array(points);
  const value = new Float64Array(points);
  const quality = new Uint8Array(points);
  for (let i = 0; i < points; i++) {
    t[i] = start + i * MIN + Math.round((rnd() - 0.5) * 10_000);
    value[i] = means[k]! + sds[k]! * z() + (i % 600 < 30 ? (means[k]! * 0.05 * (i % 600)) / 30 : 0);
    quality[i] = rnd() < 0.001 ? 2 : 0;
  }
  return { role, t, value, quality };
});

/** CPU seconds (user + system) since `from`: CPU time, not wall time, because the machine is shared. */
function cpuSince(from: NodeJS.CpuUsage): number {
  const c = process.cpuUsage(from);
  return (c.user + c.system) / 1e6;
}

function emit(bench: string, value: number, unit: string): void {
  process.stdout.write(`${JSON.stringify({ bench, value: Number(value.toPrecision(4)), unit })}\n`);
}

const stage = { align: 0, validate: 0, steady: 0 };
function once(): number {
  let c = process.cpuUsage();
  const aligned = alignTags(tags, { startMs: start, endMs: start + points * MIN });
  stage.align += cpuSince(c);
  c = process.cpuUsage();
  const validation = validateAligned(
    aligned,
    roles.map((role, k) => ({
      role,
      key: true,
      min: 0,
      max: means[k]! * 3,
      stuck: { window: 30, minStd: sds[k]! * 0.01 },
      spike: { halfWindow: 5, nSigma: 3 },
    })),
  );
  stage.validate += cpuSince(c);
  c = process.cpuUsage();
  const steady = detectSteadyState(
    ['p_in', 'T_in', 'flow'].map((role) => ({ role, value: aligned.tags.get(role)!.value })),
    { valid: validation.valid },
  );
  stage.steady += cpuSince(c);
  return steady.steadyCount;
}

let sink = once(); // warm-up
stage.align = 0;
stage.validate = 0;
stage.steady = 0;
const runs = 2;
for (let r = 0; r < runs; r++) sink += once();
const total = (stage.align + stage.validate + stage.steady) / runs;
emit('monitor.align_validate_steady.year_1min_6tags', points / total, 'points/s (CPU)');
emit('monitor.align.year_1min_6tags', points / (stage.align / runs), 'points/s (CPU)');
emit('monitor.validate.year_1min_6tags', points / (stage.validate / runs), 'points/s (CPU)');
emit('monitor.steady_state.year_1min_3keytags', points / (stage.steady / runs), 'points/s (CPU)');

const days = Float64Array.from({ length: 365 }, (_, i) => start + i * 86_400_000);
const drift = Float64Array.from(days, (_, i) => -0.016 * i + 0.1 * z());
for (let r = 0; r < 5; r++) sink += theilSen(days, drift).slope;
let evals = 0;
const c2 = process.cpuUsage();
while (cpuSince(c2) < 1) {
  sink += theilSen(days, drift).slope;
  evals++;
}
emit('monitor.theil_sen.365_daily', evals / cpuSince(c2), 'evals/s (CPU)');

{
  const t = new Float64Array(points);
  const value = new Float64Array(points);
  for (let i = 0; i < points; i++) {
    t[i] = start + i * MIN;
    value[i] = 17e5 + 2000 * z() + (i >= 0.8 * points ? 101_325 : 0);
  }
  const input = { t, value, ambientPressure: 101_325 };
  sink += detectGaugeAbsoluteStep(input).length; // warm-up
  const runsStep = 3;
  const c3 = process.cpuUsage();
  for (let r = 0; r < runsStep; r++) sink += detectGaugeAbsoluteStep(input).length;
  emit('monitor.gauge_absolute_step.year_1min', (points * runsStep) / cpuSince(c3), 'points/s (CPU)');
}
if (!Number.isFinite(sink)) process.exitCode = 1;
