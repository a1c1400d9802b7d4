/**
 * Thread scaling of the g(r) pair-distance histogram (src/neighbors.ts), on frames in memory so
 * that only the counting is measured: 2 000 uniform atoms at 0.1 atoms/Å³ (27.1 Å cube), r-max
 * 10 Å (brute force, branch-free kernel — the issue's per-core case). Each thread histograms its
 * own copy of the frame for the same wall-clock time; the rate is the sum of the threads' pair
 * distances over that time.
 *
 * The same loop is also run in separate processes (nothing shared but the machine): that speed-up
 * is the ceiling any program can reach on these cores, and tells a slow thread speed-up caused by
 * the machine (virtual CPUs that slow each other) from one caused by sojourn.
 */
import { Worker, isMainThread, parentPort, workerData } from 'node:worker_threads';
import { spawn } from 'node:child_process';
import { once } from 'node:events';
import { fileURLToPath } from 'node:url';
import { PairHistogram } from '../src/neighbors.js';
import { CellGeometry, orthorhombicCell } from '../src/cell.js';
import { positions } from './rdf.js';

const here = fileURLToPath(import.meta.url);

/** Pair distances per wall-clock second of one thread histogramming for `seconds` (after warm-up). */
export function pairRate(seconds: number): number {
  const n = 2000;
  const L = Math.cbrt(n / 0.1);
  const cell = orthorhombicCell(L, L, L);
  const g = new CellGeometry(cell);
  const pos = positions(n, cell, n);
  const idx = Int32Array.from({ length: n }, (_, i) => i);
  const bw = 0.05;
  const ph = new PairHistogram(idx, idx, Math.floor(10 / bw), bw);
  const hist = new Float64Array(ph.nbins);
  const w0 = performance.now();
  for (let k = 0; k < 3 || performance.now() - w0 < 300; k++) ph.addFrame(pos, g, hist);
  ph.pairsExamined = 0;
  const t0 = performance.now();
  let t = t0;
  while (t - t0 < seconds * 1000) {
    ph.addFrame(pos, g, hist);
    t = performance.now();
  }
  return ph.pairsExamined / ((t - t0) / 1000);
}

/** Sum of the pair rates of k worker threads of this process running at the same time. */
export async function threadRate(k: number, seconds: number): Promise<number> {
  const rates = await Promise.all(
    Array.from({ length: k }, async () => {
      const w = new Worker(here, { workerData: { seconds } });
      const [rate] = (await once(w, 'message')) as [number];
      await w.terminate();
      return rate;
    }),
  );
  return rates.reduce((s, r) => s + r, 0);
}

/** Sum of the pair rates of k separate processes running at the same time. */
export async function processRate(k: number, seconds: number): Promise<number> {
  const rates = await Promise.all(
    Array.from({ length: k }, async () => {
      const child = spawn(process.execPath, [here, '--pair-rate', String(seconds)], { stdio: ['ignore', 'pipe', 'inherit'] });
      let out = '';
      child.stdout.on('data', (d) => (out += d));
      const [code] = (await once(child, 'exit')) as [number];
      if (code !== 0) throw new Error('pair-rate child failed');
      return Number(out.trim());
    }),
  );
  return rates.reduce((s, r) => s + r, 0);
}

/** One benchmark row. */
export interface ScalingRow {
  name: string;
  value: number;
  unit: string;
  target: string;
}

/**
 * Rows: M pairs/s on 1 and 2 threads and the speed-up (target ≥ 1.7), and the same for 2
 * separate processes (the machine's ceiling, no target). Each figure is the median of `repeats`.
 */
export async function benchRdfScaling(seconds = 3, repeats = 3): Promise<ScalingRow[]> {
  const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
  const one: number[] = [];
  const two: number[] = [];
  const twoProc: number[] = [];
  const oneProc: number[] = [];
  for (let r = 0; r < repeats; r++) {
    one.push(await threadRate(1, seconds));
    two.push(await threadRate(2, seconds));
    oneProc.push(await processRate(1, seconds));
    twoProc.push(await processRate(2, seconds));
  }
  const m1 = median(one), m2 = median(two), p1 = median(oneProc), p2 = median(twoProc);
  return [
    { name: 'g(r) 2000 atoms, r-max 10 Å, frames in memory, 1 thread: pair distances per second', value: m1 / 1e6, unit: 'M pairs/s', target: '≥ 150' },
    { name: 'g(r) same, 2 threads: pair distances per second', value: m2 / 1e6, unit: 'M pairs/s', target: '—' },
    { name: 'g(r) speed-up on 2 threads', value: m2 / m1, unit: '×', target: '≥ 1.7' },
    { name: 'machine ceiling: the same loop in 2 separate processes, speed-up over 1', value: p2 / p1, unit: '×', target: '—' },
  ];
}

if (!isMainThread && parentPort && (workerData as { seconds?: number } | null)?.seconds !== undefined) {
  parentPort.postMessage(pairRate((workerData as { seconds: number }).seconds));
} else if (isMainThread && process.argv[2] === '--pair-rate') {
  process.stdout.write(`${pairRate(Number(process.argv[3]))}\n`);
}
