/**
 * Reader throughput: parse generated XYZ (plain and gzip), PDB and column tables and report
 * MB/s of decompressed text, frames/s and the process's peak resident set size; also frame
 * ranges (skipped frames are counted, not parsed) and a two-share split read from the byte
 * offsets of a frame index (what `--threads 2` workers do).
 *
 * The files are generated into a temporary folder (random coordinates with the digits a
 * typical MD writer prints, "%12.6f"-like), read once to warm up the JIT on a small file, then
 * each case is read `repeats` times and the fastest read is reported. Three rates per case,
 * MB = 10^6 bytes of decompressed text:
 * - "MB/s": wall clock (other load on the machine lowers it; with the reading thread of
 *   readers/bytes.ts the reading, hashing and inflating overlap the parsing);
 * - "MB/s per CPU s": MB per CPU second of the whole process, all threads (process.cpuUsage),
 *   so it does not depend on how many cores were free;
 * - "MB/s parsing thread": MB per CPU second of the thread that parses (Linux
 *   /proc/self/task/<pid>/stat, 10 ms ticks; NaN elsewhere) — the one-core figure.
 * "peakRSS MB" is the process's peak resident set so far (process.resourceUsage().maxRSS), so
 * it includes the earlier rows and the file generation.
 */
import { mkdtempSync, rmSync, statSync, createWriteStream, readFileSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { once } from 'node:events';
import { gzip } from 'pako';
import { openTrajectory, readTable, type FrameSelection, type OpenTrajectoryOptions } from '../readers/index.js';
import { indexFrames } from '../readers/scan.js';

export interface BenchReadersOptions {
  /** Target size of the plain XYZ file in MB (default 50). */
  sizeMB?: number;
  /** Atoms per frame (default 3000). */
  atoms?: number;
  /** Folder for the generated files (default: a new temporary folder, removed afterwards). */
  dir?: string;
  /** Skip the gzip, PDB, range and table rows. */
  xyzOnly?: boolean;
  /** Timed reads per case; the fastest is reported (default 3). */
  repeats?: number;
  /** Rows of the 7-column table (default 10^6; the case is 10^7, ~0.7 GB). */
  tableRows?: number;
}

export interface BenchRow {
  name: string;
  /** Wall clock. */
  'MB/s': number;
  /** MB per CPU second of the whole process (all threads). */
  'MB/s per CPU s': number;
  /** MB per CPU second of the parsing thread (NaN when unknown). */
  'MB/s parsing thread': number;
  'frames/s': number;
  'peakRSS MB': number;
  /** Seconds of the fastest read (wall). */
  seconds: number;
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

/** A pressure-tensor-like table: time plus 6 components, "%.5f"-like; returns its size. */
async function writeTable(path: string, rows: number): Promise<number> {
  const r = rng(99);
  const out = createWriteStream(path);
  let bytes = 0;
  let buf = '# time pxx pyy pzz pxy pxz pyz\n';
  for (let i = 0; i < rows; i++) {
    let s = (i * 0.002).toFixed(3);
    for (let k = 0; k < 6; k++) s += ` ${(r() * 200 - 100).toFixed(5)}`;
    buf += s + '\n';
    if (buf.length > 1 << 20) {
      bytes += buf.length;
      if (!out.write(buf)) await once(out, 'drain');
      buf = '';
    }
  }
  bytes += buf.length;
  out.write(buf);
  out.end();
  await once(out, 'finish');
  return bytes;
}

function peakRssMB(): number {
  return Math.round(process.resourceUsage().maxRSS / 1024);
}

/** CPU seconds of this process's main thread (Linux), or NaN. */
function mainThreadCpu(): number {
  const p = `/proc/self/task/${process.pid}/stat`;
  if (!existsSync(p)) return NaN;
  const f = readFileSync(p, 'utf8').split(') ')[1]!.split(' ');
  return (Number(f[11]) + Number(f[12])) / 100; // utime + stime, clock ticks of 10 ms
}

interface Timing {
  wall: number;
  cpu: number;
  main: number;
  frames: number;
}

/** Time `job` `repeats` times; the fastest wall clock wins (its CPU figures go with it). */
async function timeBest(repeats: number, job: () => Promise<number>): Promise<Timing> {
  let best: Timing | null = null;
  for (let k = 0; k < repeats; k++) {
    const c0 = process.cpuUsage();
    const m0 = mainThreadCpu();
    const t0 = performance.now();
    const frames = await job();
    const wall = (performance.now() - t0) / 1000;
    const c = process.cpuUsage(c0);
    const t = { wall, cpu: (c.user + c.system) / 1e6, main: mainThreadCpu() - m0, frames };
    if (best === null || t.wall < best.wall) best = t;
  }
  return best!;
}

async function readFrames(path: string, opts: Partial<OpenTrajectoryOptions> = {}, select?: FrameSelection): Promise<number> {
  const input = await openTrajectory(path, { warnings: [], ...opts });
  let n = 0;
  let check = 0;
  for await (const f of input.frames(select)) {
    n++;
    check += f.positions[0]!;
  }
  if (!Number.isFinite(check)) throw new Error('bench: bad parse');
  if (opts.hash !== false) input.sha256();
  return n;
}

function row(name: string, textBytes: number, t: Timing): BenchRow {
  const mb = textBytes / 1e6;
  return {
    name,
    'MB/s': mb / t.wall,
    'MB/s per CPU s': mb / t.cpu,
    'MB/s parsing thread': mb / t.main,
    'frames/s': t.frames / t.wall,
    'peakRSS MB': peakRssMB(),
    seconds: t.wall,
  };
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
    await writeXyz(warm, 300, 2e6);
    await timeBest(2, () => readFrames(warm));

    const xyz = join(dir, 'bench.xyz');
    const x = await writeXyz(xyz, atoms, sizeMB * 1e6);
    const mb = (x.bytes / 1e6).toFixed(0);
    rows.push(row(`read XYZ (${mb} MB, ${atoms} atoms/frame)`, x.bytes, await timeBest(repeats, () => readFrames(xyz))));
    rows.push(row(`read XYZ, no reading thread`, x.bytes, await timeBest(repeats, () => readFrames(xyz, { thread: false }))));
    if (opts.xyzOnly) return rows;

    const gz = join(dir, 'bench.xyz.gz');
    writeFileSync(gz, gzip(readFileSync(xyz), { level: 6 }));
    const gzName = `read XYZ.gz (${(statSync(gz).size / 1e6).toFixed(0)} MB compressed)`;
    rows.push(row(gzName, x.bytes, await timeBest(repeats, () => readFrames(gz))));
    rows.push(row(`read XYZ.gz, no reading thread`, x.bytes, await timeBest(repeats, () => readFrames(gz, { thread: false }))));

    // Frame ranges: every 10th frame; a short range in the middle (reading stops there, the
    // rest is only hashed). MB/s counts the whole file's text.
    rows.push(row(`read XYZ, every 10th frame`, x.bytes, await timeBest(repeats, () => readFrames(xyz, {}, { from: 0, to: Infinity, stride: 10 }))));
    const mid = Math.floor(x.frames / 2);
    rows.push(row(`read XYZ, frames ${mid}..${mid + 9} (hash the rest)`, x.bytes, await timeBest(repeats, () => readFrames(xyz, {}, { from: mid, to: mid + 10, stride: 1 }))));

    // The `--threads 2` split: one scan (frame index + SHA-256), then two shares read from
    // their byte offsets without hashing, here one after the other (CPU is what is compared
    // with the plain read above; in workers the shares run at the same time).
    const scan = await timeBest(repeats, async () => (await indexFrames(xyz)).frames);
    rows.push(row(`scan XYZ for the frame index (+ SHA-256)`, x.bytes, scan));
    const idx = await indexFrames(xyz, {});
    const half = Math.floor(idx.frames / 2);
    const share = async (a: number, b: number): Promise<number> => {
      const start = a > 0 ? idx.start(a)! : undefined;
      const end = idx.start(b)?.offset;
      return readFrames(xyz, { format: idx.format, hash: false, ...(start ? { start } : {}), ...(end !== undefined ? { end } : {}) }, { from: a, to: b, stride: 1 });
    };
    rows.push(row(`read XYZ as 2 shares from byte offsets`, x.bytes, await timeBest(repeats, async () => (await share(0, half)) + (await share(half, idx.frames)))));

    const pdb = join(dir, 'bench.pdb');
    const p = await writePdb(pdb, atoms, (sizeMB / 2) * 1e6);
    rows.push(row(`read PDB (${(p.bytes / 1e6).toFixed(0)} MB)`, p.bytes, await timeBest(repeats, () => readFrames(pdb))));

    const nrows = opts.tableRows ?? 1_000_000;
    const tab = join(dir, 'bench.tsv');
    const tb = await writeTable(tab, nrows);
    const t = await timeBest(Math.min(repeats, nrows > 5e6 ? 2 : repeats), async () => {
      const r = await readTable(tab, { warnings: [] });
      if (r.rows !== nrows) throw new Error('bench: bad table');
      return 0;
    });
    rows.push({ ...row(`read table (${nrows} rows × 7, ${(tb / 1e6).toFixed(0)} MB)`, tb, t), 'frames/s': NaN });
    rmSync(tab);
  } finally {
    if (own) rmSync(dir, { recursive: true, force: true });
  }
  return rows;
}
