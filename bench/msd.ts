/**
 * Benchmark of the coordinate store, the MSD analysis and the conductivity on top of it:
 * 1 000 atoms × 20 000 frames of synthetic random walks (500 cations, 500 anions in a 40 Å cube,
 * fed wrapped, as frames through the pass, one reused buffer as the readers do).
 * Rows: time to feed the frames, time to finish the MSD, total; peak resident memory; bytes
 * held per atom-frame; the time the conductivity adds when it finishes from the same store and
 * the same per-species MSD, as a fraction of read + MSD. Times are CPU seconds of this
 * single-threaded process (user + system), which equal wall time on an idle machine and stay
 * meaningful on a shared one.
 */
import type { Frame, PassContext, Topology } from '../src/types.js';
import { Random } from '../src/random.js';
import { CellGeometry, orthorhombicCell } from '../src/cell.js';
import { analyseMsd } from '../analyses/msd.js';
import { analyseConductivity, conductivityLayout } from '../analyses/conductivity.js';
import { parseChargeRules } from '../src/store/charges.js';
import { resolveLayout } from '../src/store/layout.js';
import { storeBytes, storePass } from '../src/store/store.js';

/** CPU time of this process in ms (user + system): robust on a shared machine, ≈ wall time when idle. */
function cpuSeconds(): number {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
}

/** One benchmark row. */
export interface BenchRow {
  name: string;
  value: number;
  unit: string;
  target: string;
}

/** Run the MSD benchmark (sizes overridable for a quick check) and return its rows. */
export function benchMsd(atoms = 1000, frames = 20000): BenchRow[] {
  const half = atoms / 2;
  const labels = Array.from({ length: atoms }, (_, i) => (i < half ? 'Na' : 'Cl'));
  const topo: Topology = {
    atoms,
    labels,
    elements: labels,
    masses: Float64Array.from(labels, (l) => (l === 'Na' ? 22.99 : 35.45)),
    charges: null,
    residues: null,
  };
  const cell = orthorhombicCell(40, 40, 40);
  const geo = new CellGeometry(cell);
  const dt = 0.01;
  const ctx: PassContext = { topology: topo, firstCell: cell, frameInterval: dt, warnings: [] };
  const layout = conductivityLayout({ charges: parseChargeRules('Na=+1,Cl=-1') });
  const pass = storePass({ layout, removeDrift: true, keepVelocities: false });

  // A pool of random step frames; each frame adds a randomly chosen one (generation stays cheap).
  const rng = new Random(1);
  const poolSize = 256;
  const pool = Array.from({ length: poolSize }, () => {
    const s = new Float64Array(3 * atoms);
    for (let k = 0; k < s.length; k++) s[k] = 0.1 * rng.normal();
    return s;
  });
  const walk = Float64Array.from({ length: 3 * atoms }, () => 40 * rng.uniform());
  const buf = new Float64Array(3 * atoms);
  const frame: Frame = { index: 0, time: null, cell, positions: buf, velocities: null, line: 1, topology: topo };

  const wallStart = performance.now();
  // Only the pass's own work is timed: the frame generation is timed alone in an identical loop
  // (same steps, no pass) and subtracted, rather than reading the CPU clock around every frame
  // (a getrusage call per frame costs ≈ 15 µs, 0.6 s over 40 000 calls).
  let pick = new Random(7);
  const generate = (t: number) => {
    if (t > 0) {
      const s = pool[Math.floor(pick.uniform() * poolSize)];
      for (let k = 0; k < walk.length; k++) walk[k] += s[k];
    }
    buf.set(walk);
    geo.wrapAll(buf);
    frame.index = t;
  };
  const walk0 = Float64Array.from(walk);
  let t0 = cpuSeconds();
  for (let t = 0; t < frames; t++) generate(t);
  const generation = cpuSeconds() - t0;
  walk.set(walk0);
  pick = new Random(7);
  t0 = cpuSeconds();
  const acc = pass.create(ctx);
  for (let t = 0; t < frames; t++) {
    generate(t);
    acc.frame(frame);
  }
  const store = acc.partial();
  const t1 = cpuSeconds();
  const feed = Math.max(0, t1 - t0 - generation);
  const lay = resolveLayout(layout, topo);
  const msd = analyseMsd(store, lay, ctx, {});
  const t2 = cpuSeconds();
  analyseConductivity(store, lay, ctx, { temperature: 300 }, msd);
  const t3 = cpuSeconds();
  const wall = (performance.now() - wallStart) / 1000;
  const peakMb = process.resourceUsage().maxRSS / 1024;
  const read = feed / 1000;
  const fin = (t2 - t1) / 1000;
  const cond = (t3 - t2) / 1000;
  return [
    { name: `msd: feed ${atoms} atoms × ${frames} frames (unwrap, store)`, value: read, unit: 's (CPU)', target: '—' },
    { name: 'msd: finish (FFT MSD, α2, fits, 5 segments)', value: fin, unit: 's (CPU)', target: '—' },
    { name: 'msd: total', value: read + fin, unit: 's (CPU)', target: '< 10' },
    { name: 'msd + conductivity: wall-clock time including frame generation', value: wall, unit: 's', target: '—' },
    { name: 'msd: peak resident memory (process)', value: peakMb, unit: 'MB', target: '—' },
    { name: 'msd: bytes held per atom-frame', value: storeBytes(store) / (atoms * frames), unit: 'B', target: '24 (+24/atoms for the centre of mass)' },
    { name: 'conductivity: added time (EH, NE, segments)', value: cond, unit: 's (CPU)', target: '—' },
    { name: 'conductivity: added fraction of msd total', value: cond / (read + fin), unit: '1', target: '< 0.3' },
  ];
}
