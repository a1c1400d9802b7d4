/**
 * The pass runner: reads a trajectory once and feeds every frame to every pass, so that all
 * analyses of a command share one read of the file.
 */
import type { Frame, Pass, PassAccumulator, PassContext, CellMatrix, Warnings } from './types.js';
import { InputError, UsageError } from './errors.js';
import { applyElements, applyMasses } from './masses.js';
import { decimalsOf, formatQuantum } from './precision.js';

/**
 * A source of frames, as produced by readers/index.ts openTrajectory. Given a range, frames()
 * may leave out the frames outside it (the readers skip them without parsing and stop after
 * the last one); frames outside it that still arrive are ignored.
 */
export interface FrameSource {
  path: string;
  frames(range?: FrameRange): AsyncGenerator<Frame>;
}

/** Which frames to use: [from, to) with a stride (all 0-based frame indices of the file). */
export interface FrameRange {
  from: number;
  to: number; // exclusive; Infinity for "to the end"
  stride: number;
}

export interface RunOptions {
  /** Time between frames (ps) given by the user; checked against the file's own times. */
  frameInterval: number | null;
  /** Cell to use for frames that carry none (e.g. plain XYZ), Å. */
  cell: CellMatrix | null;
  range?: FrameRange;
  warnings: Warnings;
  /** Masses (g/mol) by atom label that replace the element-based ones (e.g. united atoms). */
  masses?: Map<string, number>;
  /** Elements by atom label that replace the ones read from the labels (--elements). */
  elements?: Map<string, string>;
  /** Factor from the file's time unit to ps (default 1: Time= in ps). */
  timeFactor?: number;
  /** Factor from the file's velocity unit to Å/ps (default 1). */
  velocityFactor?: number;
  /** Called after each used frame with the number of frames used so far. */
  onFrame?: (used: number) => void;
}

export interface RunOutput {
  ctx: PassContext;
  partials: unknown[];
  /** Frames used by the passes. */
  framesUsed: number;
  /** Index of the first and last frame used. */
  firstIndex: number;
  lastIndex: number;
}

/** Parse "A:B" or "A:B:S" (0-based, end exclusive, either end may be empty) into a FrameRange. */
export function parseFrameRange(text: string): FrameRange {
  const m = /^(\d*):(\d*)(?::(\d+))?$/.exec(text.trim());
  if (!m) throw new UsageError(`--frames: expected FROM:TO or FROM:TO:STRIDE (0-based, TO exclusive), got "${text}"`);
  const from = m[1] === '' ? 0 : Number(m[1]);
  const to = m[2] === '' ? Infinity : Number(m[2]);
  const stride = m[3] === undefined ? 1 : Number(m[3]);
  if (stride < 1) throw new UsageError(`--frames: stride must be at least 1`);
  if (to <= from) throw new UsageError(`--frames: empty range "${text}"`);
  return { from, to, stride };
}

/**
 * Run passes over one read of `source`. Frame times from the file, when present, fix the frame
 * interval (a user value that disagrees by more than 0.1 % is a usage error); otherwise the
 * user's value is used, multiplied by the stride.
 */
export async function runPasses(source: FrameSource, passes: Pass[], opts: RunOptions): Promise<RunOutput> {
  const range = opts.range ?? { from: 0, to: Infinity, stride: 1 };
  let accs: PassAccumulator<unknown>[] | null = null;
  let ctx: PassContext | null = null;
  let used = 0;
  let firstIndex = -1;
  let lastIndex = -1;
  let firstTime: number | null = null;
  let prevTime: number | null = null;
  let fileInterval: number | null = null;
  let irregular = false;
  // Spread of the intervals, and the rounding step of the times as written (ps).
  let minDt = Infinity;
  let maxDt = -Infinity;
  let timeDecimals = 0;
  const timeFactor = opts.timeFactor ?? 1;
  const velocityFactor = opts.velocityFactor ?? 1;
  // Messages name the input as the readers do ('-' is standard input).
  const name = source.path === '-' ? '<stdin>' : source.path;
  // The range goes down to the reader, so that skipped frames are not parsed.
  for await (const f of source.frames(opts.range)) {
    if (f.index < range.from) continue;
    if (f.index >= range.to) break;
    if ((f.index - range.from) % range.stride !== 0) continue;
    if (f.cell === null && opts.cell !== null) f.cell = opts.cell;
    if (velocityFactor !== 1 && f.velocities) {
      const v = f.velocities;
      for (let k = 0; k < v.length; k++) v[k] *= velocityFactor;
    }
    if (f.time !== null) {
      timeDecimals = Math.max(timeDecimals, decimalsOf(f.time));
      if (timeFactor !== 1) f.time *= timeFactor;
      if (prevTime !== null) {
        const dt = f.time - prevTime;
        if (!(dt > 0)) {
          throw new InputError(name, f.line, null, `frame ${f.index + 1} has time ${f.time} ps, not after the previous frame's ${prevTime} ps`);
        }
        if (dt < minDt) minDt = dt;
        if (dt > maxDt) maxDt = dt;
        if (fileInterval === null) fileInterval = dt;
        else if (Math.abs(dt - fileInterval) > 1e-6 * Math.max(1, fileInterval) + 1e-9 * Math.abs(f.time)) irregular = true;
      } else firstTime = f.time;
      prevTime = f.time;
    }
    if (accs === null) {
      if (opts.elements) applyElements(f.topology, opts.elements, name);
      if (opts.masses) applyMasses(f.topology, opts.masses, name);
      ctx = {
        topology: f.topology,
        firstCell: f.cell ? Float64Array.from(f.cell) : null,
        frameInterval: opts.frameInterval !== null ? opts.frameInterval * range.stride : null,
        warnings: opts.warnings,
        file: name,
      };
      const c = ctx;
      accs = passes.map((p) => p.create(c));
      firstIndex = f.index;
    }
    for (const a of accs) a.frame(f);
    used++;
    lastIndex = f.index;
    opts.onFrame?.(used);
  }
  if (accs === null || ctx === null) {
    throw new InputError(name, null, null, range.from > 0 ? `no frames in the range ${range.from}:${range.to === Infinity ? '' : range.to}` : 'no complete frames');
  }
  if (fileInterval !== null) {
    if (irregular) {
      // The times are written to `timeDecimals` decimals: a rounding step of 10^-decimals (ps after the unit factor).
      const quantum = 10 ** -timeDecimals * timeFactor;
      // Messages must not depend on where a thread's share of the frames starts (equal ones are kept once).
      // Rounding to a step q moves an interval by at most q either way; it explains the spread only
      // when q is small beside the interval (otherwise "0.2, 0.4, 0.5" would pass for rounding).
      const rounded = 20 * quantum <= minDt && maxDt - minDt <= 2 * quantum * (1 + 1e-6) + 1e-9 * Math.abs(prevTime ?? 0);
      opts.warnings.push(
        rounded
          ? `${name}: the frame times are rounded (to ${formatQuantum(quantum)} ps), so the time between frames varies within that rounding; the interval between the first two frames is used, uncertain by up to ${formatQuantum(quantum)} ps`
          : `${name}: frame times are not evenly spaced (the spacing varies by more than the rounding of the times); the interval between the first two frames is used`,
      );
    }
    if (ctx.frameInterval !== null && Math.abs(ctx.frameInterval - fileInterval) > 1e-3 * fileInterval) {
      throw new UsageError(
        `--frame-interval gives ${ctx.frameInterval} ps between used frames but ${name} carries times ${fileInterval} ps apart`,
      );
    }
    ctx.frameInterval = fileInterval;
  }
  void firstTime;
  return { ctx, partials: accs.map((a) => a.partial()), framesUsed: used, firstIndex, lastIndex };
}

/** Finish every pass from its (merged) partial. */
export function finishPasses(passes: Pass[], partials: unknown[], ctx: PassContext): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  passes.forEach((p, i) => {
    out[p.name] = p.finish(partials[i], ctx);
  });
  return out;
}
