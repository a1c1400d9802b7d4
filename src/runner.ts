/**
 * The pass runner: reads a trajectory once and feeds every frame to every pass, so that all
 * analyses of a command share one read of the file.
 */
import type { Frame, Pass, PassAccumulator, PassContext, CellMatrix, Warnings } from './types.js';
import { InputError, UsageError } from './errors.js';
import { applyElements, applyMasses } from './masses.js';
import { FrameLogBuilder, SequenceChecker, type FrameLog } from './sequence.js';

/**
 * A source of frames, as produced by readers/index.ts openTrajectory. Given a range, frames()
 * may leave out the frames outside it (the readers skip them without parsing and stop after
 * the last one); frames outside it that still arrive are ignored.
 */
export interface FrameSource {
  path: string;
  /** Format name ('xyz', 'pdb'), when the source is a file; messages word some checks by it. */
  format?: string;
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
  /**
   * Index of a frame before `range.from` that the reader parses first and the passes never see
   * (a share of a split read starts one used frame early, so that the reader checks its first
   * frame against the frame before it, exactly as one read does).
   */
  lead?: number;
  /** Used frames left out (file indices, sorted [from, to) ranges): the earlier copies of repeated frames. */
  drop?: Array<[number, number]>;
  /**
   * Check the frame sequence (src/sequence.ts) here, frame by frame (default). A share of a split
   * read only records it: the engine checks the joined record (`RunOutput.frames`).
   */
  checkSequence?: boolean;
}

export interface RunOutput {
  ctx: PassContext;
  partials: unknown[];
  /** Frames used by the passes. */
  framesUsed: number;
  /** Index of the first and last frame used. */
  firstIndex: number;
  lastIndex: number;
  /** What the sequence checks need of every used frame (src/sequence.ts). */
  frames: FrameLog;
}

/** An error thrown by a share of a split read, with the record of the frames it used before it. */
export interface ShareFailure extends Error {
  sojournFrames?: FrameLog;
}

/**
 * Names of the passes that need evenly spaced frames, as messages give them (the report's
 * coordinate store, 'store', by what it serves).
 */
export function evenSpacingPasses(passes: Pass[]): string[] {
  return passes.filter((p) => p.needsEvenSpacing).map((p) => (p.name === 'store' ? 'the transport analyses (MSD, VACF, conductivity)' : p.name));
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
 * Run passes over one read of `source`. Every used frame is recorded (src/sequence.ts FrameLog)
 * and, unless `checkSequence` is false, checked in order before the passes see it: times,
 * cells and velocities present in every frame or none, times increasing and evenly spaced,
 * no frame repeated. Frame times from the file, when present, fix the frame interval (a user
 * value that disagrees by more than 0.1 % is a usage error); otherwise the user's value is
 * used, multiplied by the stride.
 */
export async function runPasses(source: FrameSource, passes: Pass[], opts: RunOptions): Promise<RunOutput> {
  const range = opts.range ?? { from: 0, to: Infinity, stride: 1 };
  let accs: PassAccumulator<unknown>[] | null = null;
  let ctx: PassContext | null = null;
  let used = 0;
  let firstIndex = -1;
  let lastIndex = -1;
  const timeFactor = opts.timeFactor ?? 1;
  const velocityFactor = opts.velocityFactor ?? 1;
  // Messages name the input as the readers do ('-' is standard input).
  const name = source.path === '-' ? '<stdin>' : source.path;
  const userInterval = opts.frameInterval !== null ? opts.frameInterval * range.stride : null;
  const log = new FrameLogBuilder();
  const checker =
    opts.checkSequence === false
      ? null
      : new SequenceChecker({ file: name, format: source.format ?? 'frames', evenSpacing: evenSpacingPasses(passes), range, userInterval });
  const drop = opts.drop ?? [];
  let dropAt = 0;
  // The range goes down to the reader, so that skipped frames are not parsed.
  const readRange = opts.lead !== undefined && opts.range ? { ...opts.range, from: opts.lead } : opts.range;
  try {
    for await (const f of source.frames(readRange)) {
      if (f.index < range.from) continue;
      if (f.index >= range.to) break;
      if ((f.index - range.from) % range.stride !== 0) continue;
      while (dropAt < drop.length && drop[dropAt]![1] <= f.index) dropAt++;
      if (dropAt < drop.length && drop[dropAt]![0] <= f.index) continue;
      // The file's units (--velocity-unit, --time-unit) are applied before anything sees the frame.
      if (velocityFactor !== 1 && f.velocities) {
        const v = f.velocities;
        for (let k = 0; k < v.length; k++) v[k] *= velocityFactor;
      }
      if (timeFactor !== 1 && f.time !== null) f.time *= timeFactor;
      log.push(f);
      checker?.check(log, log.count - 1);
      if (f.cell === null && opts.cell !== null) f.cell = opts.cell;
      if (accs === null) {
        if (opts.elements) applyElements(f.topology, opts.elements, name);
        if (opts.masses) applyMasses(f.topology, opts.masses, name);
        ctx = {
          topology: f.topology,
          firstCell: f.cell ? Float64Array.from(f.cell) : null,
          frameInterval: userInterval,
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
  } catch (e) {
    // A share of a split read hands the record of its frames to the engine with its error, so
    // that a sequence problem in an earlier frame is reported first, as one read would.
    if (checker === null && e instanceof Error) (e as ShareFailure).sojournFrames = log.log();
    throw e;
  }
  if (accs === null || ctx === null) {
    throw new InputError(name, null, null, range.from > 0 ? `no frames in the range ${range.from}:${range.to === Infinity ? '' : range.to}` : 'no complete frames');
  }
  const frames = log.log();
  if (checker) ctx.frameInterval = checker.finish(frames, opts.warnings);
  return { ctx, partials: accs.map((a) => a.partial()), framesUsed: used, firstIndex, lastIndex, frames };
}
