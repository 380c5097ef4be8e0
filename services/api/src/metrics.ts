/**
 * A small Prometheus metrics registry (text exposition format 0.0.4). The API records its own
 * request count and latency histogram; other services register gauges through the same registry
 * (`registry.gauge(...)`), handed to buildApp as `deps.metrics`.
 */

export type Labels = Readonly<Record<string, string>>;

/** Default latency buckets [s]; the Prometheus client libraries' defaults (common practice, no source). */
export const DEFAULT_LATENCY_BUCKETS_S: readonly number[] = [
  0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10,
];

const NAME = /^[a-zA-Z_:][a-zA-Z0-9_:]*$/;

function escapeLabel(v: string): string {
  return v.replace(/\\/g, '\\\\').replace(/\n/g, '\\n').replace(/"/g, '\\"');
}

function labelText(labels: Labels, extra?: Labels): string {
  const all = { ...labels, ...extra };
  const keys = Object.keys(all).sort();
  if (keys.length === 0) return '';
  return `{${keys.map((k) => `${k}="${escapeLabel(all[k] ?? '')}"`).join(',')}}`;
}

function key(labels: Labels): string {
  return labelText(labels);
}

function num(v: number): string {
  if (Number.isNaN(v)) return 'NaN';
  if (v === Number.POSITIVE_INFINITY) return '+Inf';
  if (v === Number.NEGATIVE_INFINITY) return '-Inf';
  return String(v);
}

interface Metric {
  readonly name: string;
  readonly help: string;
  render(): string;
}

export class Counter implements Metric {
  private readonly values = new Map<string, { labels: Labels; value: number }>();
  constructor(
    readonly name: string,
    readonly help: string,
  ) {}
  inc(labels: Labels = {}, by = 1): void {
    const k = key(labels);
    const cur = this.values.get(k);
    if (cur === undefined) this.values.set(k, { labels, value: by });
    else cur.value += by;
  }
  get(labels: Labels = {}): number {
    return this.values.get(key(labels))?.value ?? 0;
  }
  render(): string {
    const lines = [`# HELP ${this.name} ${this.help}`, `# TYPE ${this.name} counter`];
    for (const { labels, value } of this.values.values())
      lines.push(`${this.name}${labelText(labels)} ${num(value)}`);
    return lines.join('\n');
  }
}

export class Histogram implements Metric {
  private readonly series = new Map<
    string,
    { labels: Labels; counts: number[]; sum: number; count: number }
  >();
  constructor(
    readonly name: string,
    readonly help: string,
    readonly buckets: readonly number[] = DEFAULT_LATENCY_BUCKETS_S,
  ) {}
  observe(value: number, labels: Labels = {}): void {
    const k = key(labels);
    let s = this.series.get(k);
    if (s === undefined) {
      s = { labels, counts: this.buckets.map(() => 0), sum: 0, count: 0 };
      this.series.set(k, s);
    }
    for (let i = 0; i < this.buckets.length; i++)
      if (value <= (this.buckets[i] as number)) s.counts[i] = (s.counts[i] as number) + 1;
    s.sum += value;
    s.count += 1;
  }
  render(): string {
    const lines = [`# HELP ${this.name} ${this.help}`, `# TYPE ${this.name} histogram`];
    for (const s of this.series.values()) {
      this.buckets.forEach((b, i) => {
        lines.push(`${this.name}_bucket${labelText(s.labels, { le: num(b) })} ${s.counts[i]}`);
      });
      lines.push(`${this.name}_bucket${labelText(s.labels, { le: '+Inf' })} ${s.count}`);
      lines.push(`${this.name}_sum${labelText(s.labels)} ${num(s.sum)}`);
      lines.push(`${this.name}_count${labelText(s.labels)} ${s.count}`);
    }
    return lines.join('\n');
  }
}

/** A gauge read when /metrics is scraped; the collector returns one value or labelled values. */
export type GaugeCollector = () =>
  | number
  | readonly { readonly labels: Labels; readonly value: number }[]
  | Promise<number | readonly { readonly labels: Labels; readonly value: number }[]>;

export class MetricsRegistry {
  private readonly metrics = new Map<string, Metric>();
  private readonly gauges = new Map<string, { help: string; collect: GaugeCollector }>();

  private claim(name: string): void {
    if (!NAME.test(name)) throw new TypeError(`metric name ${JSON.stringify(name)} is not a Prometheus name`);
    if (this.metrics.has(name) || this.gauges.has(name))
      throw new TypeError(`metric ${name} is already registered`);
  }

  counter(name: string, help: string): Counter {
    this.claim(name);
    const c = new Counter(name, help);
    this.metrics.set(name, c);
    return c;
  }

  histogram(name: string, help: string, buckets?: readonly number[]): Histogram {
    this.claim(name);
    const h = new Histogram(name, help, buckets);
    this.metrics.set(name, h);
    return h;
  }

  /** Register a gauge whose value is collected at scrape time (e.g. queue length, last job run age). */
  gauge(name: string, help: string, collect: GaugeCollector): void {
    this.claim(name);
    this.gauges.set(name, { help, collect });
  }

  /** The whole registry in the Prometheus text format; a failing collector is skipped with a comment. */
  async render(): Promise<string> {
    const parts: string[] = [];
    for (const m of this.metrics.values()) parts.push(m.render());
    for (const [name, g] of this.gauges) {
      const head = [`# HELP ${name} ${g.help}`, `# TYPE ${name} gauge`];
      try {
        const v = await g.collect();
        if (typeof v === 'number') head.push(`${name} ${num(v)}`);
        else for (const s of v) head.push(`${name}${labelText(s.labels)} ${num(s.value)}`);
      } catch (error) {
        head.push(
          `# collector failed: ${error instanceof Error ? error.message.replace(/\n/g, ' ') : 'unknown'}`,
        );
      }
      parts.push(head.join('\n'));
    }
    return `${parts.join('\n')}\n`;
  }
}

export function createMetricsRegistry(): MetricsRegistry {
  return new MetricsRegistry();
}
