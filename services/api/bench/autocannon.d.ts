// The part of autocannon 8's API the benchmark uses (the package ships no types).
declare module 'autocannon' {
  interface Histogram {
    readonly p50: number;
    readonly p99: number;
    readonly average: number;
  }
  interface Result {
    readonly latency: Histogram;
    readonly requests: Histogram;
    readonly errors: number;
    readonly timeouts: number;
    readonly non2xx: number;
  }
  function autocannon(options: { url: string; connections?: number; duration?: number }): Promise<Result>;
  export default autocannon;
}
