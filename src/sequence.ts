/**
 * The frame sequence: what every read records about each frame it uses (a `FrameLog`: index,
 * line, time, whether a cell and velocities came with it, and a fingerprint of the positions)
 * and the checks that run over that record in frame order (`SequenceChecker`):
 *
 * - every frame carries a time, or none does; a cell, or none (the XYZ reader says this first
 *   for Lattice= and velocities, with the same words);
 * - times increase; a time that goes back to one already passed is named as the overlap of a
 *   run continued from a restart and appended to its own output;
 * - without times, a frame whose positions repeat an earlier frame's exactly (fingerprint) is
 *   a frame written twice or such an overlap;
 * - the time between frames is constant to within the precision the times are written with;
 *   a change is an error when a pass needs evenly spaced frames (`Pass.needsEvenSpacing`),
 *   otherwise a warning.
 *
 * One read checks each frame as it arrives. A read split over threads (src/engine/threads.ts)
 * or over jobs (partial files, src/engine/execute.ts) records each share's log without checking
 * and the engine checks the joined log with the same checker, so that every problem is found at
 * the same frame with the same words whatever the split. `overlapDrops` finds the earlier copies
 * of repeated frames for `--keep-later-copy`.
 */
import { decimalsOf as writtenDecimals, formatQuantum } from './precision.js';
import { InputError, UsageError } from './errors.js';
import type { Frame } from './types.js';

/** Flag bits of a logged frame. */
export const HAS_CELL = 1;
export const HAS_VELOCITIES = 2;

/** What the checks need of every used frame, in frame order (plain data: typed arrays). */
export interface FrameLog {
  count: number;
  /** 0-based frame index in the file. */
  index: Float64Array;
  /** 1-based line at which the frame starts. */
  line: Float64Array;
  /** Time (ps), NaN when the frame has none. */
  time: Float64Array;
  /** HAS_CELL | HAS_VELOCITIES, as the file gave them (before --box fills a cell in). */
  flags: Uint8Array;
  /** Fingerprint of the positions (frames without a time only; 0 otherwise): their sum and a hash. */
  sum: Float64Array;
  hash: Float64Array;
}

const INITIAL = 256;

/** An empty log. */
export function emptyLog(): FrameLog {
  return { count: 0, index: new Float64Array(0), line: new Float64Array(0), time: new Float64Array(0), flags: new Uint8Array(0), sum: new Float64Array(0), hash: new Float64Array(0) };
}

/**
 * Fingerprint of a frame's positions: their plain sum Σxᵢ (every coordinate, so any change of
 * any atom shows unless changes cancel exactly) and an FNV-1a hash (Fowler–Noll–Vo, 32-bit) of
 * the bits of up to 16 coordinates spread over the frame (so that a permutation that keeps the
 * sum shows too). Equal frames — the same numbers read from the same text — give equal
 * fingerprints; the cost is one addition per coordinate.
 */
export function positionFingerprint(pos: Float64Array): { sum: number; hash: number } {
  let sum = 0;
  for (let k = 0; k < pos.length; k++) sum += pos[k]!;
  const n = pos.length;
  const step = Math.max(1, Math.floor(n / 16));
  const one = new Float64Array(1);
  const words = new Uint32Array(one.buffer);
  let h = 0x811c9dc5;
  for (let k = 0; k < n; k += step) {
    one[0] = pos[k]!;
    for (let w = 0; w < 2; w++) {
      h ^= words[w]!;
      h = Math.imul(h, 0x01000193) >>> 0;
    }
  }
  return { sum, hash: h };
}

/** A log that grows as frames arrive. */
export class FrameLogBuilder implements FrameLog {
  count = 0;
  index = new Float64Array(INITIAL);
  line = new Float64Array(INITIAL);
  time = new Float64Array(INITIAL);
  flags = new Uint8Array(INITIAL);
  sum = new Float64Array(INITIAL);
  hash = new Float64Array(INITIAL);

  /** Record frame `f` (before any cell from the command line is filled in). */
  push(f: Frame): void {
    if (this.count === this.index.length) this.grow();
    const k = this.count++;
    this.index[k] = f.index;
    this.line[k] = f.line;
    this.time[k] = f.time === null ? NaN : f.time;
    this.flags[k] = (f.cell ? HAS_CELL : 0) | (f.velocities ? HAS_VELOCITIES : 0);
    if (f.time === null) {
      const p = positionFingerprint(f.positions);
      this.sum[k] = p.sum;
      this.hash[k] = p.hash;
    } else {
      this.sum[k] = 0;
      this.hash[k] = 0;
    }
  }

  private grow(): void {
    const n = 2 * this.index.length;
    const g = <A extends Float64Array | Uint8Array>(a: A): A => {
      const b = new (a.constructor as new (n: number) => A)(n);
      b.set(a);
      return b;
    };
    this.index = g(this.index);
    this.line = g(this.line);
    this.time = g(this.time);
    this.flags = g(this.flags);
    this.sum = g(this.sum);
    this.hash = g(this.hash);
  }

  /** The log as plain data, trimmed to the frames recorded. */
  log(): FrameLog {
    const c = this.count;
    return {
      count: c,
      index: this.index.slice(0, c),
      line: this.line.slice(0, c),
      time: this.time.slice(0, c),
      flags: this.flags.slice(0, c),
      sum: this.sum.slice(0, c),
      hash: this.hash.slice(0, c),
    };
  }
}

/** The logs of consecutive shares of a read, joined in order. */
export function joinLogs(logs: FrameLog[]): FrameLog {
  const count = logs.reduce((s, l) => s + l.count, 0);
  const out: FrameLog = {
    count,
    index: new Float64Array(count),
    line: new Float64Array(count),
    time: new Float64Array(count),
    flags: new Uint8Array(count),
    sum: new Float64Array(count),
    hash: new Float64Array(count),
  };
  let at = 0;
  for (const l of logs) {
    const c = l.count;
    out.index.set(l.index.subarray(0, c), at);
    out.line.set(l.line.subarray(0, c), at);
    out.time.set(l.time.subarray(0, c), at);
    out.flags.set(l.flags.subarray(0, c), at);
    out.sum.set(l.sum.subarray(0, c), at);
    out.hash.set(l.hash.subarray(0, c), at);
    at += c;
  }
  return out;
}

/**
 * Largest difference between two intervals that still counts as one constant interval. Times
 * written to d decimals are rounded by at most half a unit u = 10^-d each, so an interval read
 * from them is off by at most u, and intervals of one constant true spacing, being whole
 * multiples of u, differ by at most u. That allowance is granted only when u is small beside
 * the interval (u ≤ interval/20): with coarser writing a missing frame would pass for rounding.
 * Otherwise, and always, 10⁻⁶ of the interval and 10⁻¹² of the time absorb binary round-off
 * (common practice, no source).
 */
export function spacingTolerance(interval: number, decimals: number, time: number): number {
  const u = 10 ** -decimals;
  const written = u <= interval / 20 ? u * (1 + 1e-6) : 0;
  return Math.max(written, 1e-6 * interval) + 1e-12 * Math.abs(time);
}

/** What the checker needs to word its messages and decide. */
export interface SequenceContext {
  /** The input as messages name it ('<stdin>' for standard input). */
  file: string;
  /** Format of the input ('xyz', 'pdb', or another name for frames from memory). */
  format: string;
  /** Names of the passes that need evenly spaced frames (an uneven spacing is then an error). */
  evenSpacing: string[];
  /** The frames the command was asked to use (for the --frames advice). */
  range: { from: number; to: number; stride: number };
  /** Time between used frames given with --frame-interval (ps, times the stride), or null. */
  userInterval: number | null;
  /** The log joins partial-result files of separate jobs (the advice differs). */
  merging?: boolean;
}

/** Name of the option that keeps the later copy of repeated frames. */
export const KEEP_LATER_FLAG = '--keep-later-copy';

/** Frame number (1-based) of log entry k. */
function no(log: FrameLog, k: number): number {
  return log.index[k]! + 1;
}

function ps(t: number): string {
  return `${Number(t.toPrecision(12))} ps`;
}

/**
 * Checks a frame log in order (see the module comment). `check(log, k)` checks entry k given
 * entries 0…k−1 (already checked) and throws InputError at the first problem; `finish` gives
 * the interval between used frames and appends the warnings.
 */
export class SequenceChecker {
  private readonly ctx: SequenceContext;
  private timed = false;
  private firstFlags = 0;
  private decimals = 0;
  /** Interval between the first two frames, once known. */
  private ref: number | null = null;
  /** First uneven interval, kept for the warning when no pass needs even spacing. */
  private uneven: { k: number; gap: number } | null = null;
  /** Fingerprint hash → first entry with it (the sums tell a hash collision from a repeat). */
  private readonly prints = new Map<number, number>();

  constructor(ctx: SequenceContext) {
    this.ctx = ctx;
  }

  /** Check entry k of `log` (entries before it were checked by this checker). */
  check(log: FrameLog, k: number): void {
    const c = this.ctx;
    const t = log.time[k]!;
    const flags = log.flags[k]!;
    if (k === 0) {
      this.timed = !Number.isNaN(t);
      this.firstFlags = flags;
      if (this.timed) this.decimals = writtenDecimals(t);
      else this.prints.set(log.hash[k]!, 0);
      return;
    }
    this.presence(log, k, flags);
    if (!this.timed) {
      const j = this.prints.get(log.hash[k]!);
      if (j === undefined) this.prints.set(log.hash[k]!, k);
      // Equal hashes of different sums are a collision of the 32-bit hash (odds 2⁻³² a pair), not a repeat.
      else if (log.sum[j] === log.sum[k]) throw this.repeatedFrame(log, k, j);
      return;
    }
    this.decimals = Math.max(this.decimals, writtenDecimals(t));
    const prev = log.time[k - 1]!;
    const gap = t - prev;
    if (!(gap > 0)) throw this.timeBack(log, k);
    if (this.ref === null) {
      this.ref = gap;
      return;
    }
    if (Math.abs(gap - this.ref) > spacingTolerance(this.ref, this.decimals, t)) {
      if (c.evenSpacing.length > 0) {
        throw new InputError(c.file, log.line[k]!, null, `${this.unevenText(log, k, gap)}; a constant time between frames is needed by ${c.evenSpacing.join(' and ')}. ${this.unevenAdvice(log, k)}`);
      }
      this.uneven ??= { k, gap };
    }
  }

  /** Every frame must carry what the first carries: a time, a cell, velocities. */
  private presence(log: FrameLog, k: number, flags: number): void {
    const c = this.ctx;
    const hasTime = !Number.isNaN(log.time[k]!);
    const xyz = c.format === 'xyz';
    // The XYZ reader checks Lattice= and velocities against the first frame it read; these are
    // its words and its line (the comment line), so that a check made here reads the same.
    const at = xyz ? log.line[k]! + 1 : log.line[k]!;
    const diff = flags ^ this.firstFlags;
    if (diff & HAS_CELL) {
      const has = (flags & HAS_CELL) !== 0;
      throw new InputError(
        c.file,
        at,
        null,
        xyz
          ? has
            ? `frame ${no(log, k)} has a Lattice= but the first frame has none`
            : `frame ${no(log, k)} has no Lattice= but the first frame has one`
          : has
            ? `frame ${no(log, k)} has a cell but the first frame has none (every frame must have a cell, or none)`
            : `frame ${no(log, k)} has no cell but the first frame has one (every frame must have a cell, or none)`,
      );
    }
    if (diff & HAS_VELOCITIES) {
      const has = (flags & HAS_VELOCITIES) !== 0;
      throw new InputError(
        c.file,
        at,
        null,
        has ? `frame ${no(log, k)} has velocities but the first frame has none` : `frame ${no(log, k)} has no velocities but the first frame has them`,
      );
    }
    if (hasTime !== this.timed) {
      throw new InputError(
        c.file,
        at,
        null,
        hasTime
          ? `frame ${no(log, k)} has a time but the first frame has none (every frame must carry a time, or none)`
          : `frame ${no(log, k)} has no time but the first frame has one (every frame must carry a time, or none)`,
      );
    }
  }

  private overlapAdvice(): string {
    return this.ctx.merging
      ? `the jobs' frames overlap in time: run the job whose range holds the whole overlap with ${KEEP_LATER_FLAG}, or choose ranges without it`
      : `${KEEP_LATER_FLAG} keeps the later copy and drops the earlier one (as if the run had not been restarted), or --frames can pick a range without the overlap`;
  }

  /** Time k is not after time k−1. */
  private timeBack(log: FrameLog, k: number): InputError {
    const c = this.ctx;
    const t = log.time[k]!;
    const prev = log.time[k - 1]!;
    const head = `frame ${no(log, k)} has time ${ps(t)}, not after the previous frame's ${ps(prev)}`;
    const tol = this.sameTimeTolerance(t);
    if (t >= log.time[0]! - tol) {
      // Times 0…k−1 increase: the first entry at or after t (binary search).
      let lo = 0;
      let hi = k - 1;
      while (lo < hi) {
        const mid = (lo + hi) >> 1;
        if (log.time[mid]! >= t - tol) hi = mid;
        else lo = mid + 1;
      }
      const j = lo;
      const same = Math.abs(log.time[j]! - t) <= tol;
      const repeated = k - j;
      return new InputError(
        c.file,
        log.line[k]!,
        null,
        `${head}: the time goes back to ${same ? `that of frame ${no(log, j)}` : `between frames ${no(log, j - 1 >= 0 ? j - 1 : 0)} and ${no(log, j)}`}, ` +
          `as where a run continued from a restart is appended to output it overlaps (${repeated} earlier frame${repeated === 1 ? '' : 's'}, ${ps(log.time[j]!)} to ${ps(prev)}, ${repeated === 1 ? 'is' : 'are'} covered again); ` +
          this.overlapAdvice(),
      );
    }
    return new InputError(c.file, log.line[k]!, null, `${head}, and before the first frame's ${ps(log.time[0]!)}: the frames are out of order, or two runs are joined`);
  }

  /** Largest difference between two written times that are the same time. */
  private sameTimeTolerance(t: number): number {
    return 0.5 * 10 ** -this.decimals + 1e-6 * (this.ref ?? 0) + 1e-12 * Math.abs(t);
  }

  /** Frame k repeats frame j exactly (no times). */
  private repeatedFrame(log: FrameLog, k: number, j: number): InputError {
    const c = this.ctx;
    const what =
      j === k - 1
        ? `frame ${no(log, k)} repeats frame ${no(log, j)} exactly (the same positions; the frames carry no times): a frame written twice`
        : `frame ${no(log, k)} repeats frame ${no(log, j)} exactly (the same positions; the frames carry no times): frames ${no(log, j)}–${no(log, k - 1)} appear again, as where a run continued from a restart is appended to output it overlaps`;
    return new InputError(c.file, log.line[k]!, null, `${what}; ${this.overlapAdvice()}`);
  }

  private unevenText(log: FrameLog, k: number, gap: number): string {
    return `frame ${no(log, k)} comes ${ps(gap)} after frame ${no(log, k - 1)}, but frames ${no(log, 0)}–${no(log, k - 1)} are ${ps(this.ref!)} apart: the frame times are not evenly spaced`;
  }

  private unevenAdvice(log: FrameLog, k: number): string {
    const r = this.ctx.range;
    const stride = r.stride > 1 ? `:${r.stride}` : '';
    if (this.ctx.merging) return `Merge the jobs on either side of the change separately: together they are not evenly spaced.`;
    return `Use --frames to analyse an evenly spaced stretch, e.g. --frames ${r.from}:${log.index[k - 1]! + 1}${stride} for the frames before the change.`;
  }

  /**
   * After the last entry: the interval between used frames (ps) — from the times, the mean
   * (t_last − t_first)/(n − 1) when they are evenly spaced (it carries the rounding of two
   * written times instead of every interval's), the first interval when they are not; else
   * the --frame-interval value, or null. A --frame-interval that disagrees with the file's
   * times by more than 0.1 % is a usage error; an uneven spacing no pass needed is a warning.
   */
  finish(log: FrameLog, warnings: string[]): number | null {
    const c = this.ctx;
    if (!this.timed || log.count < 2) return c.userInterval;
    let interval: number;
    if (this.uneven) {
      warnings.push(`${c.file}: ${this.unevenText(log, this.uneven.k, this.uneven.gap)}; the results here do not depend on the time between frames`);
      interval = this.ref!;
    } else {
      interval = (log.time[log.count - 1]! - log.time[0]!) / (log.count - 1);
      // Spacing that varies only within the rounding of the written times: accepted, and said once.
      let lo = Infinity, hi = -Infinity;
      for (let k = 1; k < log.count; k++) {
        const gap = log.time[k]! - log.time[k - 1]!;
        if (gap < lo) lo = gap;
        if (gap > hi) hi = gap;
      }
      if (hi - lo > 1e-6 * interval + 1e-12 * Math.abs(log.time[log.count - 1]!)) {
        const q = formatQuantum(10 ** -this.decimals);
        warnings.push(
          `${c.file}: the frame times are rounded (to ${q} ps), so the time between frames varies within that rounding; ` +
            `the mean interval (t_last − t_first)/(n − 1) = ${Number(interval.toPrecision(6))} ps is used`,
        );
      }
    }
    if (c.userInterval !== null && Math.abs(c.userInterval - interval) > 1e-3 * interval) {
      throw new UsageError(`--frame-interval gives ${c.userInterval} ps between used frames but ${c.file} carries times ${Number(interval.toPrecision(12))} ps apart`);
    }
    return interval;
  }
}

/** Check a whole log (a joined one) and finish: the interval between used frames. */
export function checkSequence(log: FrameLog, ctx: SequenceContext, warnings: string[]): number | null {
  const s = new SequenceChecker(ctx);
  for (let k = 0; k < log.count; k++) s.check(log, k);
  return s.finish(log, warnings);
}

/**
 * The earlier copies of repeated frames, for `--keep-later-copy`: walking the log in order and
 * keeping a stack of kept frames, a frame whose time is not after the last kept one removes the
 * kept frames at or after its time; without times, a frame whose fingerprint equals a kept
 * frame's removes that frame and every kept frame after it. What remains is the run as it would
 * be without the overlaps (each repeated stretch in its later copy). Returns the removed frame
 * indices as sorted [from, to) ranges of file indices, and one line describing each overlap.
 */
export function overlapDrops(log: FrameLog): { drop: Array<[number, number]>; notes: string[] } {
  const n = log.count;
  const kept: number[] = [];
  const removed = new Uint8Array(n);
  const notes: string[] = [];
  const timed = n > 0 && !Number.isNaN(log.time[0]!);
  let decimals = 0;
  const prints = new Map<string, number>(); // fingerprint → position in `kept`
  for (let k = 0; k < n; k++) {
    if (timed) {
      const t = log.time[k]!;
      decimals = Math.max(decimals, writtenDecimals(t));
      const tol = 0.5 * 10 ** -decimals + 1e-12 * Math.abs(t);
      let popped = 0;
      while (kept.length > 0 && log.time[kept[kept.length - 1]!]! >= t - tol) {
        removed[kept.pop()!] = 1;
        popped++;
      }
      if (popped > 0) notes.push(`${popped} frame${popped === 1 ? '' : 's'} from ${ps(Math.max(t, log.time[0]!))} on, before frame ${no(log, k)}, which repeats that time`);
    } else {
      const key = `${log.sum[k]}:${log.hash[k]}`;
      const at = prints.get(key);
      if (at !== undefined) {
        const first = kept[at]!;
        let popped = 0;
        while (kept.length > at) {
          const j = kept.pop()!;
          removed[j] = 1;
          prints.delete(`${log.sum[j]}:${log.hash[j]}`);
          popped++;
        }
        notes.push(`${popped} frame${popped === 1 ? '' : 's'} from frame ${no(log, first)} on, before frame ${no(log, k)}, which repeats frame ${no(log, first)}`);
      }
      prints.set(key, kept.length);
    }
    kept.push(k);
  }
  const drop: Array<[number, number]> = [];
  for (let k = 0; k < n; k++) {
    if (!removed[k]) continue;
    const i = log.index[k]!;
    const last = drop[drop.length - 1];
    // Consecutive used frames (with a stride, frames between them are not used anyway).
    if (last && k > 0 && removed[k - 1] && last[1] === log.index[k - 1]! + 1) last[1] = i + 1;
    else drop.push([i, i + 1]);
  }
  return { drop, notes };
}
