/**
 * Splitting one read over threads. The frames are cut into contiguous chunks that this thread
 * and worker threads (src/worker.ts) take on demand from a shared counter; every thread builds
 * the same passes from their recipes (src/engine/recipes.ts) and reads its chunks with
 * `readShare`; the chunks' partials merge pairwise in frame order with each pass's associative
 * `merge`. Workers receive the read description and the recipes as data — never a command line.
 */
import { Worker, isMainThread, parentPort } from 'node:worker_threads';
import { availableParallelism } from 'node:os';
import { open } from 'node:fs/promises';
import { fileURLToPath } from 'node:url';
import { existsSync } from 'node:fs';
import type { Pass, Topology, Warnings } from '../types.js';
import { UsageError, InputError, AnalysisError } from '../errors.js';
import { indexFrames, type FrameIndex } from '../../readers/scan.js';
import { evenSpacingPasses, type FrameRange, type ShareFailure } from '../runner.js';
import { checkSequence, joinLogs, SequenceChecker, type FrameLog, type SequenceContext } from '../sequence.js';
import { recipeOf, type PassRecipe } from './recipes.js';
import type { ReadSpec, SharePlan, TrajectoryRun } from './read.js';

/** Chunks per thread when frames are handed out on demand, and the fewest frames in a chunk. */
const CHUNKS_PER_THREAD = 4;
const MIN_CHUNK_FRAMES = 16;

/**
 * One chunk of a parallel read: its frames and where its bytes are. A chunk after the first
 * starts reading at the used frame before its range (`lead`), which the reader parses and checks
 * but the passes never see: the reader checks the chunk's first frame against it (atom count,
 * labels, Lattice=, Properties=, velocities), exactly as one read checks consecutive frames.
 */
export interface Chunk {
  range: FrameRange;
  plan: SharePlan;
  lead?: number;
}

/** The job every worker receives in its first message. */
export interface WorkerJob {
  read: ReadSpec;
  recipes: PassRecipe[];
  chunks: Chunk[];
  counter: SharedArrayBuffer;
}

/** What a thread sends back for a chunk (or `done` once every chunk is taken). */
export interface ChunkReply {
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
  /** The record of the chunk's used frames (on failure: those used before it). */
  frames?: FrameLog;
}

/** The error a worker's failure reply stands for (bad input and analysis failures exit 1, usage 2). */
function workerFailure(m: ChunkReply): Error {
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

/** Read one chunk on this thread. */
export type LocalRead = (chunk: Chunk) => Promise<TrajectoryRun>;

/**
 * Cut the frames of `spec` into chunks: up to CHUNKS_PER_THREAD per thread, at least
 * MIN_CHUNK_FRAMES frames each; one per thread for gzip (every chunk inflates from the start).
 */
function cutChunks(spec: ReadSpec, index: FrameIndex, n: number): { chunks: Chunk[]; userTo: number } | null {
  const requested = spec.range ?? { from: 0, to: Infinity, stride: 1 };
  const { from, stride } = requested;
  const userTo = requested.to;
  const total = index.frames;
  const to = Math.min(total, userTo);
  // Frames left out (earlier copies of repeated frames) are not counted: every chunk gets used frames.
  const drop = spec.drop ?? [];
  let kept: number[] | null = null;
  if (drop.length > 0) {
    kept = [];
    let d = 0;
    for (let i = from; i < to; i += stride) {
      while (d < drop.length && drop[d]![1] <= i) d++;
      if (d < drop.length && drop[d]![0] <= i) continue;
      kept.push(i);
    }
  }
  const used = kept ? kept.length : Math.max(0, Math.ceil((to - from) / stride));
  if (used < 2 * n) return null;
  const count = index.compressed ? n : Math.max(n, Math.min(CHUNKS_PER_THREAD * n, Math.floor(used / MIN_CHUNK_FRAMES)));
  const per = Math.ceil(used / count);
  const at = (k: number) => (kept ? kept[k]! : from + k * stride);
  const chunks: Chunk[] = [];
  for (let c = 0; c < count; c++) {
    const first = c * per;
    const end = Math.min(used, (c + 1) * per);
    if (first >= end) break;
    const a = at(first);
    const b = end === used ? to : at(end);
    // The last chunk of a range open past the file's end reads to the end of the file, as one
    // read does (so a truncated last frame is reported the same way).
    const toEnd = b === to && userTo > total;
    const lead = a - stride >= from ? a - stride : undefined;
    const plan: SharePlan = { format: index.format, sha256: index.sha256, bytes: index.bytes };
    if (!index.compressed) {
      const startAt = lead ?? a;
      const s = index.start(startAt);
      if (startAt > 0 && s !== null) plan.start = s;
      const e = toEnd ? null : index.start(b);
      if (e !== null) plan.end = e.offset;
    }
    chunks.push({ range: { from: a, to: toEnd ? Infinity : b, stride }, plan, ...(lead !== undefined ? { lead } : {}) });
  }
  return { chunks, userTo };
}

/**
 * Read `spec` on `threads` threads (null: the number of cores for a plain file, 1 for gzip) and
 * merge the chunks' partials in frame order. Returns null when threads are not used: one thread,
 * standard input, a pass without a recipe, fewer than 2 frames per thread, or running from
 * TypeScript sources. Bad input found by the frame-index scan also returns null, so that one
 * read reports it exactly as a plain read does.
 */
export async function readOnThreads(
  spec: ReadSpec,
  passes: Pass[],
  warnings: Warnings,
  threads: number | null,
  local: LocalRead,
  how: { checkSequence?: boolean } = {},
): Promise<TrajectoryRun | null> {
  const n = threads ?? availableParallelism();
  const file = spec.file;
  if (n <= 1 || file === '-' || !isMainThread) return null;
  const recipes = passes.map(recipeOf);
  if (recipes.some((r) => r === null)) return null;
  const script = workerScript();
  if (!script) return null;
  // A deflate stream cannot be entered in the middle, so every worker would inflate the file from
  // its start: by default a gzipped input is read by one thread (an explicit --threads still splits).
  if (threads === null && (await isGzipFile(file))) return null;
  // Start the workers now: each spends ~0.2 s loading, which then overlaps the scan below.
  const pool: Worker[] = Array.from({ length: n - 1 }, () => new Worker(script, { workerData: null }));
  const release = (from: number) => {
    for (const w of pool.slice(from)) void w.terminate();
  };
  const to = spec.range?.to ?? Infinity;
  let index: FrameIndex;
  try {
    index = await indexFrames(file, { ...(spec.format ? { format: spec.format } : {}), ...(Number.isFinite(to) ? { upTo: to } : {}) });
  } catch (e) {
    release(0);
    if (e instanceof InputError) return null;
    throw e;
  }
  const cut = cutChunks(spec, index, n);
  if (!cut) {
    release(0);
    return null;
  }
  const { chunks } = cut;
  const usedWorkers = Math.min(pool.length, chunks.length - 1);
  release(usedWorkers);
  const seq: SequenceContext | null = how.checkSequence === false ? null : {
    file,
    format: index.format,
    evenSpacing: evenSpacingPasses(passes),
    range: spec.range ?? { from: 0, to: Infinity, stride: 1 },
    userInterval: spec.frameInterval !== null ? spec.frameInterval * (spec.range?.stride ?? 1) : null,
  };
  const replies = await runChunks(pool.slice(0, usedWorkers), { read: spec, recipes: recipes as PassRecipe[], chunks }, local, seq);
  for (const w of pool) void w.terminate();
  checkSharesAgree(file, replies);
  return mergeReplies(replies, passes, warnings, spec.range?.stride ?? 1, cut.userTo, index.frames, seq);
}

/**
 * Hand the chunks out to the workers and this thread. A failure stops the hand-out; the threads
 * finish the chunk they hold, and the failure in the earliest chunk is thrown (the earliest bad
 * frame, as one read would report it) — unless the frames used before it, in that chunk and the
 * earlier ones, hold a sequence problem (src/sequence.ts): one read would have stopped there
 * first. The workers' promises never reject, so no failure can go unhandled while this thread is
 * still reading.
 */
async function runChunks(workers: Worker[], job: Omit<WorkerJob, 'counter'>, local: LocalRead, seq: SequenceContext | null): Promise<ChunkReply[]> {
  const counter = new Int32Array(new SharedArrayBuffer(4));
  const total = job.chunks.length;
  const replies: ChunkReply[] = new Array(total);
  const failures: Array<{ chunk: number; error: unknown; frames: FrameLog | undefined }> = [];
  const fail = (chunk: number, error: unknown, frames?: FrameLog) => {
    Atomics.store(counter, 0, total);
    failures.push({ chunk, error, frames });
  };
  const finished = workers.map(
    (worker) =>
      new Promise<void>((resolve) => {
        worker.on('message', (m: ChunkReply & { done?: boolean }) => {
          if (m.done) resolve();
          else if (!m.ok) {
            fail(m.chunk ?? Infinity, workerFailure(m), m.frames);
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
        worker.postMessage({ ...job, counter: counter.buffer } satisfies WorkerJob);
      }),
  );
  // This thread takes chunks too, from the same counter: it has the passes built already, and
  // would otherwise sit idle on cores the workers fill.
  for (let c = Atomics.add(counter, 0, 1); c < total; c = Atomics.add(counter, 0, 1)) {
    try {
      replies[c] = replyOf(await local(job.chunks[c]!));
    } catch (err) {
      fail(c, err, (err as ShareFailure | null)?.sojournFrames);
    }
  }
  await Promise.all(finished);
  if (failures.length > 0) {
    failures.sort((x, y) => x.chunk - y.chunk);
    const f = failures[0]!;
    // Chunks are taken in order, so every chunk before the failed one has replied.
    if (seq !== null && Number.isFinite(f.chunk)) {
      const logs = replies.slice(0, f.chunk).map((r) => r.frames!);
      if (f.frames) logs.push(f.frames);
      const log = joinLogs(logs);
      const checker = new SequenceChecker(seq);
      for (let k = 0; k < log.count; k++) checker.check(log, k);
    }
    throw f.error;
  }
  return replies;
}

/** Each thread checked its frames against its own first frame; the shares must agree too. */
function checkSharesAgree(file: string, replies: ChunkReply[]): void {
  const t0 = replies[0]!.topology as Topology;
  for (const r of replies.slice(1)) {
    const t = r.topology as Topology;
    const k = t.atoms !== t0.atoms ? -1 : t.labels.findIndex((x, i) => x !== t0.labels[i]);
    if (t.atoms !== t0.atoms || k >= 0) {
      throw new InputError(
        file,
        null,
        null,
        t.atoms !== t0.atoms
          ? `frame ${r.firstIndex! + 1} has ${t.atoms} atoms, but frame ${replies[0]!.firstIndex! + 1} has ${t0.atoms} (every frame must have the same atoms)`
          : `atom ${k + 1} of frame ${r.firstIndex! + 1} is labelled '${t.labels[k]}', but '${t0.labels[k]}' in frame ${replies[0]!.firstIndex! + 1} (every frame must list the same atoms in the same order)`,
      );
    }
  }
}

/**
 * Merge the chunks' partials pairwise in frame order, level by level (merge is associative), so
 * that passes whose partials concatenate (stored coordinates) copy each frame log₂(chunks)
 * times, not chunks times. Warnings are kept once each, in chunk order. The chunks' frame
 * records are joined and checked as one read checks its frames (src/sequence.ts), which also
 * gives the interval between frames.
 */
function mergeReplies(replies: ChunkReply[], passes: Pass[], warnings: Warnings, stride: number, userTo: number, total: number, seq: SequenceContext | null): TrajectoryRun {
  const frames = joinLogs(replies.map((r) => r.frames!));
  const seen = new Set<string>();
  for (const r of replies) for (const w of r.warnings ?? []) if (!seen.has(w)) { seen.add(w); warnings.push(w); }
  const frameInterval = seq !== null ? checkSequence(frames, seq, warnings) : null;
  let level = replies.map((r) => r.partials!);
  while (level.length > 1) {
    const next: unknown[][] = [];
    for (let i = 0; i < level.length; i += 2) {
      const x = level[i]!, y = level[i + 1];
      next.push(y === undefined ? x : x.map((m, k) => passes[k]!.merge(m, y[k])));
    }
    level = next;
  }
  const r0 = replies[0]!;
  const lastIndex = replies[replies.length - 1]!.lastIndex!;
  return {
    ctx: {
      topology: r0.topology as Topology,
      firstCell: r0.firstCell ? Float64Array.from(r0.firstCell) : null,
      frameInterval,
      warnings,
    },
    partials: level[0]!,
    framesUsed: replies.reduce((s, r) => s + (r.framesUsed ?? 0), 0),
    firstIndex: r0.firstIndex!,
    lastIndex,
    frames,
    // Frames seen, as a read on one thread counts them: it stops after the last used frame when
    // the next one in the range would be at or past the range's end, else reads the whole file.
    input: { ...r0.input!, frames: lastIndex + stride >= userTo ? lastIndex + 1 : total },
  };
}

/** A chunk's outcome in the form the parent merges. */
export function replyOf(run: TrajectoryRun): ChunkReply {
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
    frames: run.frames,
  };
}

/** Worker side: report a failure to the parent. */
export function replyWorkerError(err: unknown, chunk: number): void {
  const e = err instanceof Error ? err : new Error(String(err));
  const frames = (e as ShareFailure).sojournFrames;
  parentPort!.postMessage({ ok: false, chunk, error: { name: e.name, message: e.message }, ...(frames ? { frames } : {}) } satisfies ChunkReply);
}
