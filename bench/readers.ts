/**
 * Reader throughput: parse generated XYZ (plain and gzip), PDB and a column table and report
 * MB/s of decompressed text, frames/s and the process's peak resident set size.
 *
 * The files are generated into a temporary folder (random coordinates with the digits a
 * typical MD writer prints, "%12.6f"-like), read once to warm up the JIT on a small file, then
 * each case is read `repeats` times and the fastest read is reported (wall clock, so other
 * load on the machine lowers the figures). MB = 10^6 bytes of decompressed text. "peakRSS MB"
 * is the process's peak resident set so far (process.resourceUsage().maxRSS), so it includes
 * the earlier rows and the file generation.
 */
import { mkdtempSync, rmSync, writeFileSync, statSync, createWriteStream } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { once } from 'node:events';
import { gzip } from 'pako';
import { openTrajectory, readTable } from '../readers/index.js';

export interface BenchReadersOptions {
  /** Target size of the plain XYZ file in MB (default 50). */
  sizeMB?: number;
  /** Atoms per frame (default 3000). */
  atoms?: number;
  /** Folder for the generated files (default: a new temporary folder, removed afterwards). */
  dir?: string;
  /** Skip the gzip, PDB and table rows. */
  xyzOnly?: boolean;
  /** Timed reads per case; the fastest is reported (default 3). */
  repeats?: number;
}

export interface BenchRow {
  name: string;
  'MB/s': number;
  'frames/s': number;
  'peakRSS MB': number;
}

/** Small deterministic generator (xorshift32) so that runs are comparable. */
function rng(seed: number): () => number {
  let s = seed >>> 0 || 1;
  return () => {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    return s / 4294967296;
  };
}

const LABELS = ['O', 'H', 'H'];

async function writeXyz(path: string, atoms: number, targetBytes: number): Promise<{ frames: number; bytes: number }> {
  const r = rng(12345);
  const out = createWriteStream(path);
  let bytes = 0;
  let frames = 0;
  while (bytes < targetBytes) {
    let s = `${atoms}\nLattice="31.0 0 0 0 31.0 0 0 0 31.0" Properties=species:S:1:pos:R:3 Time=${(frames * 0.1).toFixed(3)}\n`;
    for (let i = 0; i < atoms; i++) {
      s += `${LABELS[i % 3]} ${(r() * 31).toFixed(6).padStart(12)} ${(r() * 31).toFixed(6).padStart(12)} ${(r() * 31).toFixed(6).padStart(12)}\n`;
    }
    bytes += s.length;
    frames++;
    if (!out.write(s)) await once(out, 'drain');
  }
  out.end();
  await once(out, 'finish');
  return { frames, bytes };
}

async function writePdb(path: string, atoms: number, targetBytes: number): Promise<{ frames: number; bytes: number }> {
  const r = rng(777);
  const out = createWriteStream(path);
  let bytes = 0;
  let frames = 0;
  const f83 = (x: number) => x.toFixed(3).padStart(8);
  while (bytes < targetBytes) {
    let s = `CRYST1   31.000   31.000   31.000  90.00  90.00  90.00 P 1           1\nMODEL     ${String(frames + 1).padStart(4)}\n`;
    for (let i = 0; i < atoms; i++) {
      const name = i % 3 === 0 ? ' OW ' : i % 3 === 1 ? ' HW1' : ' HW2';
      const res = (Math.floor(i / 3) % 10000) + 1;
      s += `ATOM  ${String((i % 99999) + 1).padStart(5)} ${name} SOL  ${String(res).padStart(4)}    ${f83(r() * 31)}${f83(r() * 31)}${f83(r() * 31)}  1.00  0.00           ${name.trim()[0]}\n`;
    }
    s += 'ENDMDL\n';
    bytes += s.length;
    frames++;
    if (!out.write(s)) await once(out, 'drain');
  }
  out.end();
  await once(out, 'finish');
  return { frames, bytes };
}

function writeTable(path: string, rows: number): number {
  const r = rng(99);
  const parts: string[] = ['# time pxy pxz pyz\n'];
  for (let i = 0; i < rows; i++) {
    parts.push(`${(i * 0.002).toFixed(3)} ${(r() * 200 - 100).toFixed(5)} ${(r() * 200 - 100).toFixed(5)} ${(r() * 200 - 100).toFixed(5)}\n`);
  }
  const text = parts.join('');
  writeFileSync(path, text);
  return text.length;
}

function peakRssMB(): number {
  return Math.round(process.resourceUsage().maxRSS / 1024);
}

async function timeTrajectory(path: string, textBytes: number, repeats = 1): Promise<{ mbps: number; fps: number }> {
  let best = { mbps: 0, fps: 0 };
  for (let k = 0; k < repeats; k++) {
    const r = await timeOnce(path, textBytes);
    if (r.mbps > best.mbps) best = r;
  }
  return best;
}

async function timeOnce(path: string, textBytes: number): Promise<{ mbps: number; fps: number }> {
  const warnings: string[] = [];
  const t0 = performance.now();
  const input = await openTrajectory(path, { warnings });
  let n = 0;
  let check = 0;
  for await (const f of input.frames()) {
    n++;
    check += f.positions[0]!;
  }
  const dt = (performance.now() - t0) / 1000;
  if (!Number.isFinite(check)) throw new Error('bench: bad parse');
  return { mbps: textBytes / 1e6 / dt, fps: n / dt };
}

/** Run the reader benchmarks and return one row per case. */
export async function benchReaders(opts: BenchReadersOptions = {}): Promise<BenchRow[]> {
  const sizeMB = opts.sizeMB ?? 50;
  const atoms = opts.atoms ?? 3000;
  const repeats = Math.max(1, opts.repeats ?? 3);
  const own = opts.dir === undefined;
  const dir = opts.dir ?? mkdtempSync(join(tmpdir(), 'sojourn-bench-readers-'));
  const rows: BenchRow[] = [];
  try {
    // warm-up on a small file
    const warm = join(dir, 'warm.xyz');
    const w = await writeXyz(warm, 300, 2e6);
    await timeTrajectory(warm, w.bytes);

    const xyz = join(dir, 'bench.xyz');
    const x = await writeXyz(xyz, atoms, sizeMB * 1e6);
    const rx = await timeTrajectory(xyz, x.bytes, repeats);
    rows.push({ name: `read XYZ (${(x.bytes / 1e6).toFixed(0)} MB, ${atoms} atoms/frame)`, 'MB/s': rx.mbps, 'frames/s': rx.fps, 'peakRSS MB': peakRssMB() });
    if (!opts.xyzOnly) {
      const { readFileSync } = await import('node:fs');
      const gz = join(dir, 'bench.xyz.gz');
      writeFileSync(gz, gzip(readFileSync(xyz), { level: 6 }));
      const rg = await timeTrajectory(gz, x.bytes, repeats);
      rows.push({
        name: `read XYZ.gz (${(statSync(gz).size / 1e6).toFixed(0)} MB compressed)`,
        'MB/s': rg.mbps,
        'frames/s': rg.fps,
        'peakRSS MB': peakRssMB(),
      });
      const pdb = join(dir, 'bench.pdb');
      const p = await writePdb(pdb, atoms, (sizeMB / 2) * 1e6);
      const rp = await timeTrajectory(pdb, p.bytes, repeats);
      rows.push({ name: `read PDB (${(p.bytes / 1e6).toFixed(0)} MB)`, 'MB/s': rp.mbps, 'frames/s': rp.fps, 'peakRSS MB': peakRssMB() });
      const tab = join(dir, 'bench.tsv');
      const tb = writeTable(tab, 500_000);
      let dt = Infinity;
      let nrows = 0;
      for (let k = 0; k < repeats; k++) {
        const t0 = performance.now();
        const t = await readTable(tab, { warnings: [] });
        dt = Math.min(dt, (performance.now() - t0) / 1000);
        nrows = t.rows;
      }
      rows.push({ name: `read table (${nrows} rows × 4)`, 'MB/s': tb / 1e6 / dt, 'frames/s': NaN, 'peakRSS MB': peakRssMB() });
    }
  } finally {
    if (own) rmSync(dir, { recursive: true, force: true });
  }
  return rows;
}
