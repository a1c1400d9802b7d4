/**
 * Splitting one command's frames across worker threads, and merging partial results written by
 * separate jobs. Both work the same way: the command is run again (in a worker, or in the merge
 * step) with the same arguments, and `runOnTrajectory` (src/commands/common.ts) either hands its
 * partials back to the parent or, when merging, takes them from the partial files instead of
 * reading the trajectory. Passes merge with their own associative `merge`, in frame order.
 */
import { Worker, isMainThread, parentPort } from 'node:worker_threads';
import { availableParallelism } from 'node:os';
import { readFile, open } from 'node:fs/promises';
import { fileURLToPath } from 'node:url';
import { existsSync } from 'node:fs';
import type { Pass, Warnings } from '../types.js';
import { UsageError, InputError, AnalysisError } from '../errors.js';
import { decodePartial, decodeTopology, type PartialFile } from '../partials.js';
import { indexFrames, type FrameIndex } from '../../readers/scan.js';
import type { FrameSeed } from '../../readers/common.js';
import type { TrajectoryOptions, TrajectoryRun } from './common.js';
import { parseFrameRange, type FrameRange } from '../runner.js';

let invocation: { command: string; args: string[] } = { command: '', args: [] };

/** Record the command line being run (argv without node and script). */
export function setInvocation(args: string[]): void {
  invocation = { command: args[0] ?? '', args: args.slice(1) };
}

/** The command line being run: command name and its arguments. */
export function currentInvocation(): { command: string; args: string[] } {
  return invocation;
}

/**
 * How a worker reads its share, worked out by the parent from its frame index (readers/scan.ts):
 * the format, the digest and size of the whole file (the parent's scan hashed it once, so the
 * worker hashes nothing), and for a plain file the byte offset, line and carried state of the
 * share's first frame and the offset where the share ends, so that the worker reads only its
 * share. A gzip file cannot be entered in the middle: its workers read from the start,
 * skipping earlier frames by counting lines, and stop after their share.
 */
export interface WorkerReadPlan {
  path: string;
  format: 'xyz' | 'pdb';
  sha256: string;
  bytes: number;
  start?: { offset: number; line: number; index: number; seed: FrameSeed | null };
  end?: number;
}

let readPlan: WorkerReadPlan | null = null;

/** In a worker: how to read the trajectory `file` (null when the parent gave no plan for it). */
export function workerReadPlan(file: string): WorkerReadPlan | null {
  return readPlan !== null && readPlan.path === file ? readPlan : null;
}

/** Worker side: install the read plan the parent sent (workerData.plan). */
export function setWorkerReadPlan(plan: WorkerReadPlan | null): void {
  readPlan = plan;
}

type MergeFn = (file: string, passes: Pass[], warnings: Warnings) => Promise<TrajectoryRun>;
let merger: MergeFn | null = null;

/** When set, runOnTrajectory takes partials from files instead of reading the trajectory. */
export function mergeSource(): MergeFn | null {
  return merger;
}

type Capture = (run: TrajectoryRun, passes: Pass[]) => void;
let capture: Capture | null = null;

/** In a worker: the function that hands partials to the parent (then the command stops). */
export function workerCapture(): Capture | null {
  return capture;
}

/** Thrown inside a worker after its partials were handed over, to end the command early. */
export class PartialsHandedOver extends Error {
  constructor() {
    super('partials handed to the parent thread');
  }
}

/** Options that must not be passed on to workers or merge re-runs (they are set there). */
const STRIP_WITH_VALUE = new Set(['--frames', '--threads', '--partial-out']);

/** Remove --frames/--threads/--partial-out (with their values) from an argument list. */
export function stripRangeOptions(args: string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < args.length; i++) {
    const a = args[i];
    const eq = a.indexOf('=');
    const key = eq > 0 ? a.slice(0, eq) : a;
    if (STRIP_WITH_VALUE.has(key)) {
      if (eq < 0) i++;
      continue;
    }
    out.push(a);
  }
  return out;
}

/**
 * Merge the partial files of jobs that analysed frame ranges of one trajectory. Files are put in
 * frame order; overlapping ranges are refused, gaps are warned about.
 */
export async function loadPartialFiles(paths: string[]): Promise<PartialFile[]> {
  const docs: PartialFile[] = [];
  for (const p of paths) {
    let doc: PartialFile;
    try {
      doc = JSON.parse(await readFile(p, 'utf8')) as PartialFile;
    } catch (e) {
      throw new InputError(p, null, null, `not a readable partial-result file (${(e as Error).message})`);
    }
    if (doc?.tool !== 'sojourn' || doc.kind !== 'partial' || !Array.isArray(doc.partials)) {
      throw new InputError(p, null, null, 'not a sojourn partial-result file (written with --partial-out)');
    }
    docs.push(doc);
  }
  if (docs.length === 0) throw new UsageError('merge needs at least one partial-result file');
  const first = docs[0];
  for (const [i, d] of docs.entries()) {
    if (d.command !== first.command || JSON.stringify(stripRangeOptions(d.argv)) !== JSON.stringify(stripRangeOptions(first.argv))) {
      throw new UsageError(`${paths[i]} was written by "${[d.command, ...d.argv].join(' ')}", not the same command and options as ${paths[0]}`);
    }
    if (d.input.sha256 !== first.input.sha256) {
      throw new UsageError(`${paths[i]} comes from a different input file (SHA-256 differs from ${paths[0]})`);
    }
  }
  docs.sort((a, b) => a.firstIndex - b.firstIndex);
  return docs;
}

/** Install the merge source for a set of partial files (used by `sojourn merge`). */
export function useMergeSource(docs: PartialFile[]): void {
  merger = async (file, passes, warnings) => {
    const names = passes.map((p) => p.name);
    for (const d of docs) {
      if (JSON.stringify(d.passes) !== JSON.stringify(names)) {
        throw new UsageError(`partial file passes [${d.passes.join(', ')}] do not match this command's [${names.join(', ')}]`);
      }
    }
    for (let i = 1; i < docs.length; i++) {
      if (docs[i].firstIndex <= docs[i - 1].lastIndex) {
        throw new UsageError(`partial files overlap: frames ${docs[i - 1].firstIndex}–${docs[i - 1].lastIndex} and ${docs[i].firstIndex}–${docs[i].lastIndex}`);
      }
    }
    for (const d of docs) warnings.push(...d.warnings);
    const parts = docs.map((d) => d.partials.map(decodePartial));
    let merged = parts[0];
    for (let i = 1; i < parts.length; i++) merged = merged.map((m, k) => passes[k].merge(m, parts[i][k]));
    const d0 = docs[0];
    return {
      ctx: {
        topology: decodeTopology(d0.topology),
        firstCell: d0.firstCell ? Float64Array.from(d0.firstCell) : null,
        frameInterval: d0.frameInterval,
        warnings,
      },
      partials: merged,
      framesUsed: docs.reduce((s, d) => s + d.framesUsed, 0),
      firstIndex: d0.firstIndex,
      lastIndex: docs[docs.length - 1].lastIndex,
      input: { path: file, sha256: d0.input.sha256, bytes: d0.input.bytes, format: d0.input.format, frames: null },
    };
  };
}

/** Chunks per thread when frames are handed out on demand, and the fewest frames in a chunk. */
const CHUNKS_PER_THREAD = 4;
const MIN_CHUNK_FRAMES = 16;

/** What a worker sends back for a chunk (or `done` once every chunk is taken). */
interface WorkerReply {
  ok: boolean;
  /** Index of the chunk this reply is for. */
  chunk?: number;
  error?: { name: string; message: string };
  partials?: unknown[];
  firstIndex?: number;
  lastIndex?: number;
  framesUsed?: number;
  frameInterval?: number | null;
  firstCell?: number[] | null;
  topology?: unknown;
  input?: TrajectoryRun['input'];
  warnings?: string[];
}

/** The error a worker's failure reply stands for (bad input and analysis failures exit 1, usage 2). */
function workerFailure(m: WorkerReply): Error {
  const e = m.error ?? { name: 'Error', message: 'worker failed' };
  if (e.name === 'UsageError') return new UsageError(e.message);
  if (e.name === 'InputError' || e.name === 'AnalysisError') return new AnalysisError(e.message);
  return new Error(e.message);
}

/** True when the file starts with the gzip magic bytes 0x1f 0x8b (RFC 1952 §2.3.1). */
async function isGzipFile(path: string): Promise<boolean> {
  let fh;
  try {
    fh = await open(path, 'r');
  } catch {
    return false; // the reader reports a missing or unreadable file with its own message
  }
  try {
    const buf = Buffer.alloc(2);
    const { bytesRead } = await fh.read(buf, 0, 2, 0);
    return bytesRead === 2 && buf[0] === 0x1f && buf[1] === 0x8b;
  } catch {
    return false; // e.g. a folder: the reader names the problem
  } finally {
    await fh.close();
  }
}

/** Path of the compiled worker entry (workers need JavaScript; absent when running from sources). */
function workerScript(): string | null {
  const here = fileURLToPath(import.meta.url);
  if (!here.endsWith('.js')) return null;
  const p = fileURLToPath(new URL('../worker.js', import.meta.url));
  return existsSync(p) ? p : null;
}

/** Read a share of the trajectory on this thread (src/commands/common.ts readTrajectory). */
export type LocalRead = (range: FrameRange, plan: WorkerReadPlan, warnings: Warnings, quiet: boolean) => Promise<TrajectoryRun>;

/**
 * Run the current command on `threads` threads and merge their partials in frame order. The
 * frames are cut into contiguous chunks (up to CHUNKS_PER_THREAD per thread, at least
 * MIN_CHUNK_FRAMES frames each; one per thread for gzip) that this thread and threads − 1
 * workers take from a shared counter as they become free. This thread takes chunks too: it has
 * the command loaded already, and would otherwise sit idle on cores the workers fill. Returns
 * null when threads are not used: one thread, stdin, fewer than 2 frames per thread, or running
 * from TypeScript sources.
 */
export async function runInWorkers(
  file: string,
  opts: TrajectoryOptions,
  passes: Pass[],
  warnings: Warnings,
  threads: number | null,
  local: LocalRead,
): Promise<TrajectoryRun | null> {
  const n = threads ?? availableParallelism();
  if (n <= 1 || file === '-' || !isMainThread) return null;
  // Workers replay the current command on a share of the frames: only possible when this
  // trajectory is the command's main input (not, e.g., a trajectory read for its cell volume).
  if (invocation.args[0] !== file) return null;
  const script = workerScript();
  if (!script) return null;
  // A deflate stream cannot be entered in the middle, so every worker would inflate the file from
  // its start: by default a gzipped input is read by one thread (an explicit --threads still splits).
  if (threads === null && (await isGzipFile(file))) return null;
  // Start the workers now: each spends ~0.2 s loading the CLI, which then overlaps the scan below.
  // They wait for their share in a message; any not needed are terminated.
  const pool: Worker[] = Array.from({ length: n - 1 }, () => new Worker(script, { workerData: null }));
  const release = (from: number) => {
    for (const w of pool.slice(from)) void w.terminate();
  };
  // Frame range requested by the user (already validated by runOnTrajectory).
  const requested = opts.frames ? parseFrameRange(opts.frames) : { from: 0, to: Infinity, stride: 1 };
  const { from, stride } = requested;
  let to = requested.to;
  // One scan finds the frame starts (up to `to`) and hashes the file. Bad input: read on one
  // thread instead, which reports it exactly as a plain read does.
  let index: FrameIndex;
  try {
    index = await indexFrames(file, { ...(opts.format ? { format: opts.format } : {}), ...(Number.isFinite(to) ? { upTo: to } : {}) });
  } catch (e) {
    release(0);
    if (e instanceof InputError) return null;
    throw e;
  }
  const total = index.frames;
  const userTo = to;
  to = Math.min(total, to);
  const used = Math.max(0, Math.ceil((to - from) / stride));
  if (used < 2 * n) {
    release(0);
    return null;
  }
  // Chunks handed out on demand: a thread that runs faster (or starts earlier: this one has the
  // command loaded, the workers are still loading it) takes more of them, so the threads finish
  // together even on cores that slow each other down. A gzip file is read from its start for every
  // chunk, so there it stays one chunk per thread.
  const chunks = index.compressed ? n : Math.max(n, Math.min(CHUNKS_PER_THREAD * n, Math.floor(used / MIN_CHUNK_FRAMES)));
  const per = Math.ceil(used / chunks);
  const args = stripRangeOptions(invocation.args);
  const work: Array<{ argv: string[]; plan: WorkerReadPlan; range: FrameRange }> = [];
  for (let c = 0; c < chunks; c++) {
    const a = from + c * per * stride;
    const b = Math.min(to, from + (c + 1) * per * stride);
    if (a >= b) break;
    // The last chunk of a range open past the file's end reads to the end of the file, as one
    // read does (so a truncated last frame is reported the same way).
    const toEnd = b === to && userTo > total;
    const plan: WorkerReadPlan = { path: file, format: index.format, sha256: index.sha256, bytes: index.bytes };
    if (!index.compressed) {
      const s = index.start(a);
      if (a > 0 && s !== null) plan.start = s;
      const e = toEnd ? null : index.start(b);
      if (e !== null) plan.end = e.offset;
    }
    const argv = [invocation.command, ...args, '--frames', `${a}:${toEnd ? '' : b}:${stride}`, '--threads', '1', '--quiet'];
    work.push({ argv, plan, range: { from: a, to: toEnd ? Infinity : b, stride } });
  }
  const counter = new Int32Array(new SharedArrayBuffer(4));
  const stop = () => Atomics.store(counter, 0, work.length);
  const usedWorkers = Math.min(pool.length, work.length - 1);
  release(usedWorkers);
  const replies: WorkerReply[] = new Array(work.length);
  // Failures of any thread, with the chunk they happened in. A failure stops the hand-out; the
  // threads finish the chunk they hold, and the failure in the earliest chunk is reported (the
  // earliest bad frame, as one read would report it). The workers' promises never reject, so no
  // failure can go unhandled while this thread is still reading.
  const failures: Array<{ chunk: number; error: unknown }> = [];
  const fail = (chunk: number, error: unknown) => {
    stop();
    failures.push({ chunk, error });
  };
  const finished = pool.slice(0, usedWorkers).map(
    (worker) =>
      new Promise<void>((resolve) => {
        worker.on('message', (m: WorkerReply & { done?: boolean }) => {
          if (m.done) resolve();
          else if (!m.ok) {
            fail(m.chunk ?? Infinity, workerFailure(m));
            resolve();
          } else replies[m.chunk!] = m;
        });
        worker.once('error', (e) => {
          fail(Infinity, e);
          resolve();
        });
        worker.once('exit', (code) => {
          if (code !== 0) fail(Infinity, new Error(`worker exited with status ${code}`));
          resolve();
        });
        worker.postMessage({ chunks: work.map(({ argv, plan }) => ({ argv, plan })), counter: counter.buffer });
      }),
  );
  // This thread takes chunks too, from the same counter.
  for (let c = Atomics.add(counter, 0, 1); c < work.length; c = Atomics.add(counter, 0, 1)) {
    const { range, plan } = work[c]!;
    try {
      replies[c] = replyOf(await local(range, plan, [], true));
    } catch (err) {
      // Bad input in this thread's chunk keeps the error a plain read raises.
      fail(c, err);
    }
  }
  await Promise.all(finished);
  for (const w of pool) void w.terminate();
  if (failures.length > 0) {
    failures.sort((x, y) => x.chunk - y.chunk);
    throw failures[0]!.error;
  }
  // Each worker checked its frames against its own first frame; the shares must agree too.
  const t0 = replies[0].topology as TrajectoryRun['ctx']['topology'];
  for (const r of replies.slice(1)) {
    const t = r.topology as TrajectoryRun['ctx']['topology'];
    const k = t.atoms !== t0.atoms ? -1 : t.labels.findIndex((x, i) => x !== t0.labels[i]);
    if (t.atoms !== t0.atoms || k >= 0) {
      throw new InputError(
        file,
        null,
        null,
        t.atoms !== t0.atoms
          ? `frame ${r.firstIndex! + 1} has ${t.atoms} atoms, but frame ${replies[0].firstIndex! + 1} has ${t0.atoms} (every frame must have the same atoms)`
          : `atom ${k + 1} of frame ${r.firstIndex! + 1} is labelled '${t.labels[k]}', but '${t0.labels[k]}' in frame ${replies[0].firstIndex! + 1} (every frame must list the same atoms in the same order)`,
      );
    }
  }
  const seen = new Set<string>();
  for (const r of replies) for (const w of r.warnings ?? []) if (!seen.has(w)) { seen.add(w); warnings.push(w); }
  // Partials arrive by structured clone (typed arrays and Maps survive it as they are). Merged
  // pairwise in frame order, level by level (merge is associative), so that passes whose
  // partials concatenate (stored coordinates) copy each frame log₂(chunks) times, not chunks times.
  let level = replies.map((r) => r.partials!);
  while (level.length > 1) {
    const next: unknown[][] = [];
    for (let i = 0; i < level.length; i += 2) {
      const x = level[i]!, y = level[i + 1];
      next.push(y === undefined ? x : x.map((m, k) => passes[k]!.merge(m, y[k])));
    }
    level = next;
  }
  const merged = level[0]!;
  const r0 = replies[0];
  const lastIndex = replies[replies.length - 1].lastIndex!;
  return {
    ctx: {
      topology: r0.topology as TrajectoryRun['ctx']['topology'],
      firstCell: r0.firstCell ? Float64Array.from(r0.firstCell) : null,
      frameInterval: r0.frameInterval ?? null,
      warnings,
    },
    partials: merged,
    framesUsed: replies.reduce((s, r) => s + (r.framesUsed ?? 0), 0),
    firstIndex: r0.firstIndex!,
    lastIndex: replies[replies.length - 1].lastIndex!,
    // Frames seen, as a read on one thread counts them: it stops after the last used frame when
    // the next one in the range would be at or past the range's end, else reads the whole file.
    input: { ...r0.input!, frames: lastIndex + stride >= userTo ? lastIndex + 1 : total },
  };
}

/** Worker side: install the capture that posts partials to the parent. */
export function installWorkerCapture(chunk: number): void {
  capture = (run) => {
    parentPort!.postMessage({ ...replyOf(run), chunk });
    throw new PartialsHandedOver();
  };
}

/** A share's outcome in the form the parent merges. */
function replyOf(run: TrajectoryRun): WorkerReply {
  return {
    ok: true,
    partials: run.partials,
    firstIndex: run.firstIndex,
    lastIndex: run.lastIndex,
    framesUsed: run.framesUsed,
    frameInterval: run.ctx.frameInterval,
    firstCell: run.ctx.firstCell ? Array.from(run.ctx.firstCell) : null,
    topology: run.ctx.topology,
    input: run.input,
    warnings: [...run.ctx.warnings],
  };
}

/** Worker side: report a failure to the parent. */
export function replyWorkerError(err: unknown, chunk: number): void {
  const e = err instanceof Error ? err : new Error(String(err));
  parentPort!.postMessage({ ok: false, chunk, error: { name: e.name, message: e.message } } satisfies WorkerReply);
}

