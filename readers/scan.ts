/**
 * A quick first pass that finds where every frame of a trajectory starts, without parsing
 * coordinates, so that work can be split among worker threads by frame index.
 *
 * It runs the real parser (readers/xyz.ts, readers/pdb.ts) with every frame skipped: XYZ
 * frames are counted by their atom-count line and a native newline search over the next
 * N + 1 lines; PDB frames by their MODEL/ENDMDL/END records (CRYST1 and TITLE records are
 * still read, since they carry into later frames). So frame boundaries, indices and line
 * numbers are exactly those of a full read. For each frame it records the byte offset and
 * line number of its first line and (PDB) the state carried into it (FrameSeed), so that a
 * worker can open a plain file at its first frame (OpenTrajectoryOptions.start / end) instead
 * of reading everything before it. Offsets of gzip input are offsets in the decompressed text
 * and cannot be used to seek; such input is read from the start and skipped by counting.
 *
 * The same pass hashes the raw bytes (SHA-256) and counts them, so workers told the digest
 * need not hash anything (OpenTrajectoryOptions.hash: false): the whole file is hashed once
 * per run, however many workers share it.
 */
import type { FrameSeed, FrameStartInfo } from './common.js';
import { openTrajectory, type TrajectoryFormat } from './index.js';

/** Frame starts of one file (see the module comment). */
export interface FrameIndex {
  format: TrajectoryFormat;
  /** Complete frames (the first `upTo` only, when the scan was told to stop there). */
  frames: number;
  /** The file is gzip-compressed: offsets cannot be used to seek. */
  compressed: boolean;
  /** Hex SHA-256 of the raw file bytes (the whole file, also when the scan stopped early). */
  sha256: string;
  /** Raw size in bytes. */
  bytes: number;
  /** Frames whose start is recorded (frames, plus frame `upTo` when the scan stopped there). */
  starts: number;
  /**
   * Where frame i starts (0 ≤ i < starts): byte offset and 1-based line number of its first
   * line, and the state carried into it. Null past the recorded starts.
   */
  start(i: number): { offset: number; line: number; index: number; seed: FrameSeed | null } | null;
}

/** Options of indexFrames. */
export interface IndexFramesOptions {
  format?: TrajectoryFormat;
  /** Stop after recording the start of frame `upTo` (frames past it are not needed). */
  upTo?: number;
  /** Raw read size (tests: small values put chunk boundaries everywhere). */
  highWaterMark?: number;
}

/** Thrown from the frame-start callback to end the scan at frame `upTo`. */
class StopScan extends Error {}

function sameSeed(a: FrameSeed, b: FrameSeed): boolean {
  return a.time === b.time && a.placeholderWarned === b.placeholderWarned && sameCell(a.cell, b.cell);
}

function sameCell(a: number[] | null, b: number[] | null): boolean {
  if (a === null || b === null) return a === b;
  for (let k = 0; k < 9; k++) if (a[k] !== b[k]) return false;
  return true;
}

/**
 * Find the start of every frame of a file (format from the option, the name, or the content);
 * see the module comment. Bad input raises the InputError the reader raises for it (the
 * scan's warnings, e.g. about a truncated last frame, are dropped: the full read repeats them).
 */
export async function indexFrames(path: string, opts: IndexFramesOptions = {}): Promise<FrameIndex> {
  let offsets = new Float64Array(1024);
  let lines = new Float64Array(1024);
  let seedOf = new Int32Array(1024);
  const seeds: FrameSeed[] = [];
  let n = 0;
  const upTo = opts.upTo ?? Infinity;
  const onFrameStart = (info: FrameStartInfo): void => {
    if (n === offsets.length) {
      const grow = <A extends Float64Array | Int32Array>(a: A): A => {
        const b = new (a.constructor as new (n: number) => A)(a.length * 2);
        b.set(a);
        return b;
      };
      offsets = grow(offsets);
      lines = grow(lines);
      seedOf = grow(seedOf);
    }
    offsets[n] = info.offset;
    lines[n] = info.line;
    seedOf[n] = -1;
    const seed = info.seed;
    if (seed !== null) {
      const prev = seeds.length > 0 ? seeds[seeds.length - 1]! : null;
      if (prev !== null && sameSeed(prev, seed)) seedOf[n] = seeds.length - 1;
      else {
        if (prev !== null && sameCell(prev.cell, seed.cell)) seed.cell = prev.cell;
        seeds.push(seed);
        seedOf[n] = seeds.length - 1;
      }
    }
    n++;
    if (info.index >= upTo) throw new StopScan('scan done');
  };
  const input = await openTrajectory(path, {
    ...(opts.format !== undefined ? { format: opts.format } : {}),
    ...(opts.highWaterMark !== undefined ? { highWaterMark: opts.highWaterMark } : {}),
    warnings: [],
    select: { from: Infinity, to: Infinity, stride: 1 },
    onFrameStart,
  });
  let stopped = false;
  try {
    for await (const _ of input.frames()) void _;
  } catch (e) {
    if (!(e instanceof StopScan)) throw e;
    stopped = true;
  }
  const frames = stopped ? n - 1 : input.framesComplete();
  const starts = n;
  const fo = offsets;
  const fl = lines;
  const fs = seedOf;
  return {
    format: input.format,
    frames,
    compressed: input.compressed(),
    sha256: input.sha256(),
    bytes: input.rawBytes(),
    starts,
    start(i) {
      if (!(i >= 0 && i < starts)) return null;
      const s = fs[i]!;
      return { offset: fo[i]!, line: fl[i]!, index: i, seed: s >= 0 ? seeds[s]! : null };
    },
  };
}

/** Count complete frames in a file (format from the option, the name, or the content). */
export async function countFrames(path: string, format?: TrajectoryFormat): Promise<number> {
  return (await indexFrames(path, format !== undefined ? { format } : {})).frames;
}
