/**
 * Benchmark of `sojourn viscosity`: a 10⁷-row pressure tensor (6 columns) through the viscosity
 * analysis, and the table parser on a written file.
 *
 * Parse and analysis are measured separately: a 10⁷-row text table is ≈ 0.7 GB, too slow to
 * write on every benchmark run, so the parser is timed on a smaller file (default 10⁶ rows,
 * same layout) and its rate is extrapolated linearly to 10⁷ rows (the parser is a single
 * streaming pass, so its cost is linear in the rows). The analysis is timed on 10⁷ in-memory
 * rows. Targets: analysis + projected parse of 10⁷ rows < 10 s.
 *
 * Data: isotropic synthetic stress — five independent Ornstein–Uhlenbeck shear components
 * (τ = 50 fs, σ = 300 bar, src/random.ts) mapped onto pxy, pxz, pyz, pxx, pyy, pzz (plus an
 * independent pressure fluctuation on the diagonal), sampled every 2 fs.
 *
 * Peak RSS is the process-wide maximum resident set size (getrusage maxrss) after each step, so
 * it includes everything measured before it in the same process (here: the 10⁷ × 6 synthetic
 * columns, 480 MB, that stand in for the parsed table). CPU time is reported next to wall time
 * because the benchmark machine is shared.
 */
import { promises as fsp } from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { ornsteinUhlenbeck } from '../src/random.js';
import { readTable } from '../readers/table.js';
import { analyseViscosity, shearComponents, type StressColumns } from '../analyses/viscosity.js';

/** One benchmark row. */
export interface BenchRow {
  name: string;
  value: number;
  unit: string;
  target: string;
}

const DT = 0.002;
const TAU = 0.05;
const SIGMA = 300;

/** Synthetic isotropic stress tensor of n rows (bar), see the module comment. */
export function syntheticStress(n: number, seed = 4242): Required<StressColumns> {
  const xy = ornsteinUhlenbeck(n, DT, TAU, SIGMA, seed);
  const xz = ornsteinUhlenbeck(n, DT, TAU, SIGMA, seed + 1);
  const yz = ornsteinUhlenbeck(n, DT, TAU, SIGMA, seed + 2);
  const xx = ornsteinUhlenbeck(n, DT, TAU, SIGMA, seed + 3); // holds a, then P_xx
  const yy = ornsteinUhlenbeck(n, DT, TAU, SIGMA, seed + 4); // holds c, then P_yy
  const p = ornsteinUhlenbeck(n, DT, 0.1, 500, seed + 5);
  const zz = new Float64Array(n);
  const r3 = Math.sqrt(3);
  for (let i = 0; i < n; i++) {
    const a = xx[i];
    const c = yy[i];
    const pr = 1 + p[i];
    xx[i] = pr + a - c / r3;
    yy[i] = pr - a - c / r3;
    zz[i] = pr + (2 * c) / r3;
  }
  return { xy, xz, yz, xx, yy, zz };
}

function peakRssMB(): number {
  return process.resourceUsage().maxRSS / 1024;
}

/** Write the table as "# time pxx pyy pzz pxy pxz pyz" text, in chunks. */
async function writeTable(file: string, s: Required<StressColumns>): Promise<void> {
  const h = await fsp.open(file, 'w');
  try {
    await h.write('# time pxx pyy pzz pxy pxz pyz\n');
    const n = s.xy.length;
    const chunk = 100_000;
    for (let a = 0; a < n; a += chunk) {
      const lines: string[] = [];
      for (let i = a; i < Math.min(n, a + chunk); i++) {
        lines.push(`${(i * DT).toFixed(3)} ${s.xx[i].toFixed(3)} ${s.yy[i].toFixed(3)} ${s.zz[i].toFixed(3)} ${s.xy[i].toFixed(3)} ${s.xz[i].toFixed(3)} ${s.yz[i].toFixed(3)}`);
      }
      await h.write(lines.join('\n') + '\n');
    }
  } finally {
    await h.close();
  }
}

/**
 * Run the benchmark: analysis of `rows` in-memory rows (default 10⁷), parse of `parseRows`
 * written rows (default 10⁶) extrapolated to `rows`. Returns table rows.
 */
export async function benchViscosity(rows = 10_000_000, parseRows = 1_000_000): Promise<BenchRow[]> {
  const out: BenchRow[] = [];
  // Parse.
  const dir = await fsp.mkdtemp(path.join(os.tmpdir(), 'sojourn-bench-visc-'));
  const file = path.join(dir, 'stress.dat');
  try {
    await writeTable(file, syntheticStress(parseRows, 99));
    // Two parses, the faster one kept: the first pays one-time costs (compiling the parser, the
    // reading thread's start) that a 10⁷-row parse pays once, not ten times, so they must not be
    // multiplied by the linear projection.
    let parseSec = Infinity;
    for (let k = 0; k < 2; k++) {
      const t0 = performance.now();
      const table = await readTable(file, { warnings: [] });
      parseSec = Math.min(parseSec, (performance.now() - t0) / 1000);
      if (table.rows !== parseRows) throw new Error(`bench: parsed ${table.rows} rows, expected ${parseRows}`);
    }
    out.push({ name: `parse ${parseRows} rows × 7 columns`, value: parseSec, unit: 's', target: '—' });
    out.push({ name: `parse, projected to ${rows} rows (linear)`, value: (parseSec * rows) / parseRows, unit: 's', target: '—' });
  } finally {
    await fsp.rm(dir, { recursive: true, force: true });
  }
  // Analysis.
  let cols: StressColumns | null = syntheticStress(rows);
  const t1 = performance.now();
  const cpu0 = process.cpuUsage();
  const components = shearComponents(cols, true);
  cols = null;
  const a = analyseViscosity({ components, dt: DT, volumeA3: 27000, temperatureK: 300, pascalPerUnit: 1e5 });
  const anaSec = (performance.now() - t1) / 1000;
  const cpu = process.cpuUsage(cpu0);
  out.push({ name: `viscosity analysis, ${rows} rows × 6 columns (${a.result.segments} segments), wall`, value: anaSec, unit: 's', target: '—' });
  out.push({ name: 'viscosity analysis, CPU time (user + system, all threads)', value: (cpu.user + cpu.system) / 1e6, unit: 's', target: '—' });
  const projected = out[1].value + anaSec;
  out.push({ name: `parse (projected) + analysis, ${rows} rows`, value: projected, unit: 's', target: '< 10 s' });
  out.push({ name: 'peak RSS (whole process)', value: peakRssMB(), unit: 'MB', target: '—' });
  out.push({ name: 'result converged (1 = yes)', value: a.result.converged ? 1 : 0, unit: '', target: '1' });
  return out;
}
