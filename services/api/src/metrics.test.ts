import { describe, expect, it } from 'vitest';
import { createMetricsRegistry } from './metrics.js';

// Prometheus text exposition format 0.0.4 (prometheus.io, "Exposition formats"): HELP and TYPE
// lines, cumulative histogram buckets with le labels ending in +Inf, _sum and _count.
describe('metrics registry', () => {
  it('renders counters, cumulative histogram buckets and collected gauges', async () => {
    const r = createMetricsRegistry();
    const c = r.counter('t_requests_total', 'Requests.');
    c.inc({ route: '/a' });
    c.inc({ route: '/a' }, 2);
    const h = r.histogram('t_latency_seconds', 'Latency.', [0.1, 1]);
    h.observe(0.05);
    h.observe(0.5);
    h.observe(5);
    r.gauge('t_queue_length', 'Queue.', () => 7);
    r.gauge('t_lag_seconds', 'Lag.', () => [{ labels: { job: 'compute' }, value: 12.5 }]);
    const text = await r.render();
    expect(text).toContain('# TYPE t_requests_total counter\nt_requests_total{route="/a"} 3');
    expect(text).toContain('t_latency_seconds_bucket{le="0.1"} 1');
    expect(text).toContain('t_latency_seconds_bucket{le="1"} 2');
    expect(text).toContain('t_latency_seconds_bucket{le="+Inf"} 3');
    expect(text).toContain('t_latency_seconds_sum 5.55');
    expect(text).toContain('t_latency_seconds_count 3');
    expect(text).toContain('# TYPE t_queue_length gauge\nt_queue_length 7');
    expect(text).toContain('t_lag_seconds{job="compute"} 12.5');
  });

  it('refuses a name twice and a name Prometheus does not accept', () => {
    const r = createMetricsRegistry();
    r.counter('a_total', 'x');
    expect(() => r.gauge('a_total', 'y', () => 1)).toThrow(/already registered/);
    expect(() => r.counter('bad-name', 'x')).toThrow(/not a Prometheus name/);
  });

  it('escapes label values and reports a failing collector as a comment', async () => {
    const r = createMetricsRegistry();
    r.counter('e_total', 'x').inc({ path: 'a"b\\c' });
    r.gauge('g_broken', 'x', () => {
      throw new Error('db down');
    });
    const text = await r.render();
    expect(text).toContain('e_total{path="a\\"b\\\\c"} 1');
    expect(text).toContain('# collector failed: db down');
  });
});
