/**
 * One read of a trajectory (or of one share of it) through a set of passes. What to read is
 * plain data (`ReadSpec`), so that the same description reaches worker threads unchanged.
 */
import { openTrajectory } from '../../readers/index.js';
import type { FrameSeed } from '../../readers/common.js';
import { runPasses, type FrameRange, type RunOutput } from '../runner.js';
import type { InputRecord } from '../output.js';
import type { CellMatrix, Pass, Warnings } from '../types.js';
import type { ChecksResult } from '../checks.js';
import { UNIT_FACTORS } from '../units.js';

/** What to read and how: every field is plain data (structured-clone safe). */
export interface ReadSpec {
  /** Path, or '-' for standard input. */
  file: string;
  format?: 'xyz' | 'pdb';
  /** A truncated last frame is an error instead of a warning. */
  strict: boolean;
  /** Cell for frames that carry none (Å), or null. */
  cell: CellMatrix | null;
  /** Time between stored frames given by the user (ps), or null. */
  frameInterval: number | null;
  /** Frames to use; absent = all. */
  range?: FrameRange;
  /** Masses (g/mol) by atom label that replace the element-based ones. */
  masses?: Array<[string, number]>;
  /** Elements by atom label that replace the ones read from the labels (--elements). */
  elements?: Array<[string, string]>;
  /** Unit of the file's frame times (src/units.ts time units) and whether the user gave it; default ps, assumed. */
  timeUnit?: string;
  timeUnitGiven?: boolean;
  /** Unit of the file's velocities (src/units.ts velocity units) and whether the user gave it; default Å/ps, assumed. */
  velocityUnit?: string;
  velocityUnitGiven?: boolean;
  /** The temperature the command was given (K), checked against the kinetic temperature; absent when none. */
  temperature?: number;
  /**
   * Where frames repeat (a run continued from a restart appended to output it overlaps), keep
   * the later copy: the engine finds the earlier copies first (src/sequence.ts overlapDrops)
   * and sets `drop`.
   */
  keepLater?: boolean;
  /** Used frames to leave out (file indices, sorted [from, to) ranges). */
  drop?: Array<[number, number]>;
}

/**
 * How one thread reads its share, worked out by the parent from its frame index (readers/scan.ts):
 * the format, the digest and size of the whole file (the parent's scan hashed it once, so the
 * share hashes nothing), and for a plain file the byte offset, line and carried state of the
 * share's first frame and the offset where the share ends. A gzip file cannot be entered in the
 * middle: its shares read from the start, skipping earlier frames, and stop after their share.
 */
export interface SharePlan {
  format: 'xyz' | 'pdb';
  sha256: string;
  bytes: number;
  start?: { offset: number; line: number; index: number; seed: FrameSeed | null };
  end?: number;
}

/** Result of reading one trajectory through a set of passes. */
export interface TrajectoryRun extends RunOutput {
  input: InputRecord;
  /** The plausibility checks of the read (src/checks.ts), set by src/engine/execute.ts. */
  checks?: ChecksResult;
}

/**
 * Read `spec.file` (or the share a plan describes) through `passes`, frames restricted to
 * `range`; `onFrame` is told the number of frames used so far.
 */
export async function readShare(
  spec: ReadSpec,
  passes: Pass[],
  warnings: Warnings,
  how: {
    range: FrameRange | undefined;
    plan: SharePlan | null;
    onFrame?: (used: number) => void;
    /** A share of a split read: the frame read before the range (see RunOptions.lead), and no sequence checks (the engine checks the joined record). */
    lead?: number;
    share?: boolean;
  },
): Promise<TrajectoryRun> {
  const { plan } = how;
  const input = await openTrajectory(spec.file, {
    format: plan?.format ?? spec.format,
    strict: spec.strict,
    warnings,
    // A share of a parallel run: no hashing (the parent's scan did it) and no reading thread (the
    // other threads fill the cores; a helper would only compete with them, and cost its start-up
    // for every share).
    ...(plan ? { hash: false, thread: false, ...(plan.start ? { start: plan.start } : {}), ...(plan.end !== undefined ? { end: plan.end } : {}) } : {}),
  });
  const out = await runPasses(input, passes, {
    frameInterval: spec.frameInterval,
    cell: spec.cell,
    range: how.range,
    warnings,
    ...(spec.masses ? { masses: new Map(spec.masses) } : {}),
    ...(spec.elements ? { elements: new Map(spec.elements) } : {}),
    timeFactor: UNIT_FACTORS.time[spec.timeUnit ?? 'ps'] ?? 1,
    velocityFactor: UNIT_FACTORS.velocity[spec.velocityUnit ?? 'A/ps'] ?? 1,
    ...(how.onFrame ? { onFrame: how.onFrame } : {}),
    ...(how.lead !== undefined ? { lead: how.lead } : {}),
    ...(spec.drop ? { drop: spec.drop } : {}),
    ...(how.share ? { checkSequence: false } : {}),
  });
  return {
    ...out,
    input: {
      path: spec.file,
      sha256: plan ? plan.sha256 : input.sha256(),
      bytes: plan ? plan.bytes : input.rawBytes(),
      format: input.format,
      frames: input.framesComplete(),
    },
  };
}
