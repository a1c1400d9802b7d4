/**
 * Benchmark of the convergence analysis: one AR(1) series (φ = 0.9, g = 19) of 10⁷ samples
 * through `analyseSeries`, plus the FFT autocorrelation it rests on. Target: analyseSeries
 * under 10 s for 10⁷ samples.
 * peakRssMB is the process-wide peak resident set size after the step (getrusage maxrss), so it
 * includes the 80 MB series itself and anything measured before.
 */
import { ar1Series } from '../src/random.js';
import { autocorrelation } from '../src/correlate.js';
import { analyseSeries } from '../analyses/converge.js';

/** One benchmark row. */
export interface ConvergeBenchRow {
  name: string;
  seconds: number;
  peakRssMB: number;
}

function peakRssMB(): number {
  return process.resourceUsage().maxRSS / 1024;
}

function timed(name: string, f: () => unknown): ConvergeBenchRow {
  const t = performance.now();
  f();
  return { name, seconds: (performance.now() - t) / 1000, peakRssMB: peakRssMB() };
}

/** Run the benchmark on an n-sample AR(1) series (default 10⁷) and return its rows. */
export function benchConverge(n = 10_000_000): ConvergeBenchRow[] {
  let x: Float64Array = new Float64Array(0);
  const rows: ConvergeBenchRow[] = [];
  rows.push(timed(`generate AR(1), ${n} samples`, () => (x = ar1Series(n, 0.9, 2024))));
  rows.push(timed(`autocorrelation, ${n} samples, 1000 lags`, () => autocorrelation(x, { maxLag: 1000, subtractMean: true })));
  rows.push(timed(`analyseSeries, ${n} samples`, () => analyseSeries('ar1', x, { dt: 0.001, unit: 'kJ/mol', target: { relative: 0.01 } })));
  return rows;
}
