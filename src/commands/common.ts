/**
 * Shared plumbing for the commands: common options, opening a trajectory and running passes
 * on it, progress on a TTY, and printing either the human table or the JSON envelope.
 * Only the CLI layer (src/cli.ts and src/commands/) reads argv-derived options.
 */
import { Command, Option } from 'commander';
import cliProgress from 'cli-progress';
import { openTrajectory } from '../../readers/index.js';
import { runPasses, parseFrameRange, type FrameRange, type RunOutput } from '../runner.js';
import { parseQuantity } from '../units.js';
import { cellFromParameters, orthorhombicCell } from '../cell.js';
import { UsageError } from '../errors.js';
import { checkOutputFile, envelope, stageFile, toJson, type InputRecord } from '../output.js';
import { encodePartial, encodeTopology, type PartialFile } from '../partials.js';
import { VERSION } from '../version.js';
import { currentInvocation, mergeSource, runInWorkers, workerCapture, workerReadPlan, type WorkerReadPlan } from './parallel.js';
import type { CellMatrix, Pass, Warnings } from '../types.js';

/** Options every trajectory command accepts. */
export interface TrajectoryOptions {
  format?: 'xyz' | 'pdb';
  strict?: boolean;
  box?: string;
  frames?: string;
  frameInterval?: string;
  json?: boolean;
  quiet?: boolean;
  partialOut?: string;
  threads?: string;
  masses?: string;
}

/** Add --json and --quiet. */
export function addOutputOptions(cmd: Command): Command {
  return cmd
    .option('--json', 'print one JSON object (the result envelope) on stdout instead of tables')
    .option('--quiet', 'no progress display and no warnings on stderr');
}

/** Add the options that say how to read a trajectory. */
export function addTrajectoryOptions(cmd: Command): Command {
  cmd
    .addOption(new Option('--format <kind>', 'input format when the name does not tell').choices(['xyz', 'pdb']))
    .option('--strict', 'treat a truncated last frame as an error instead of a warning')
    .option('--box <lengths>', 'periodic cell for files that carry none: "a,b,c" (Å) or "a,b,c,alpha,beta,gamma" (Å, degrees); units allowed, e.g. "3nm,3nm,3nm"')
    .option('--frames <from:to[:stride]>', 'use frames FROM..TO-1 (0-based) with a stride')
    .option('--frame-interval <time>', 'time between stored frames when the file has no times, e.g. 0.05ps or 50fs')
    .option('--masses <pairs>', 'masses by atom label in g/mol, for labels that are not element symbols, e.g. "Sv=18,CH3=15.035"')
    .option('--partial-out <file>', 'also write this run\'s partial results (for `sojourn merge` of jobs over frame ranges)')
    .option('--threads <n>', 'threads that share the frames, this one included (default: number of cores for plain files, 1 for gzipped ones; 1 = no workers)');
  return addOutputOptions(cmd);
}

/** Parse --box into a cell matrix (Å). */
export function parseBox(text: string): CellMatrix {
  const parts = text.split(',').map((s) => s.trim());
  if (parts.length !== 3 && parts.length !== 6) throw new UsageError(`--box: expected 3 lengths or 3 lengths and 3 angles, got "${text}"`);
  const len = parts.slice(0, 3).map((p) => parseQuantity(p, 'length', '--box', 'A'));
  if (len.some((x) => !(x > 0))) throw new UsageError(`--box: lengths must be positive, got "${text}"`);
  if (parts.length === 3) return orthorhombicCell(len[0], len[1], len[2]);
  const ang = parts.slice(3).map((p) => Number(p.replace(/deg$/, '')));
  const cell = cellFromParameters(len[0], len[1], len[2], ang[0], ang[1], ang[2]);
  if (!cell) throw new UsageError(`--box: angles ${ang.join(', ')} do not make a cell`);
  return cell;
}

/** Parse --masses "A=18,B=15.0" into a map of label → g/mol. */
export function parseMasses(text: string | undefined): Map<string, number> | undefined {
  if (text === undefined) return undefined;
  const m = new Map<string, number>();
  for (const part of text.split(',')) {
    const i = part.lastIndexOf('=');
    const value = Number(part.slice(i + 1));
    if (i <= 0 || !(value > 0)) throw new UsageError(`--masses: expected LABEL=MASS pairs (g/mol) separated by commas, got "${part}"`);
    m.set(part.slice(0, i).trim(), value);
  }
  return m;
}

/** Parse an optional positive time option (ps). */
export function parsePositiveTime(text: string | undefined, what: string): number | null {
  if (text === undefined) return null;
  const v = parseQuantity(text, 'time', what);
  if (!(v > 0)) throw new UsageError(`${what} must be positive, got "${text}"`);
  return v;
}

/** Result of reading one trajectory through a set of passes. */
export interface TrajectoryRun extends RunOutput {
  input: InputRecord;
}

/** A progress display on stderr, only on a TTY and without --quiet. */
export function progressFor(label: string, quiet: boolean | undefined): { tick: (n: number) => void; stop: () => void } {
  if (quiet || !process.stderr.isTTY) return { tick: () => {}, stop: () => {} };
  const bar = new cliProgress.SingleBar(
    { format: `${label} {value} frames  {duration_formatted}`, stream: process.stderr, fps: 5, hideCursor: true },
    cliProgress.Presets.shades_classic,
  );
  bar.start(0, 0);
  return { tick: (n) => bar.update(n), stop: () => bar.stop() };
}

/** Open `file`, run `passes` on one read of it, and describe the input for the envelope. */
export async function runOnTrajectory(
  file: string,
  opts: TrajectoryOptions,
  passes: Pass[],
  warnings: Warnings,
): Promise<TrajectoryRun> {
  const frameInterval = parsePositiveTime(opts.frameInterval, '--frame-interval');
  const cell = opts.box ? parseBox(opts.box) : null;
  const range = opts.frames ? parseFrameRange(opts.frames) : undefined;
  if (opts.partialOut) checkOutputFile(opts.partialOut, [file], '--partial-out');
  const merged = mergeSource();
  if (merged) return merged(file, passes, warnings);
  const threads = opts.threads === undefined ? null : Number(opts.threads);
  if (threads !== null && !(Number.isInteger(threads) && threads >= 1)) throw new UsageError(`--threads must be a whole number ≥ 1, got "${opts.threads}"`);
  let run: TrajectoryRun;
  const local = (share: FrameRange | undefined, plan: WorkerReadPlan | null, into: Warnings, quiet: boolean | undefined) =>
    readTrajectory(file, opts, passes, into, { frameInterval, cell, range: share, plan, quiet });
  const parallel = workerCapture() === null ? await runInWorkers(file, opts, passes, warnings, threads, local) : null;
  if (parallel) run = parallel;
  // In a worker, the parent's plan says where the share starts and ends and gives the digest.
  else run = await local(range, workerReadPlan(file), warnings, opts.quiet);
  const capture = workerCapture();
  if (capture) capture(run, passes);
  if (opts.partialOut) await writePartialFile(opts.partialOut, run, passes, warnings);
  return run;
}

/**
 * One read of `file` (or of the share a read plan describes: byte offsets, carried state and the
 * digest from the parent's frame index) through `passes`, frames restricted to `range`.
 */
export async function readTrajectory(
  file: string,
  opts: TrajectoryOptions,
  passes: Pass[],
  warnings: Warnings,
  how: { frameInterval: number | null; cell: CellMatrix | null; range: FrameRange | undefined; plan: WorkerReadPlan | null; quiet: boolean | undefined },
): Promise<TrajectoryRun> {
  const { plan } = how;
  const input = await openTrajectory(file, {
    format: plan?.format ?? opts.format,
    strict: !!opts.strict,
    warnings,
    // A chunk of a parallel run: no hashing (the parent's scan did it) and no reading thread (the
    // other threads fill the cores; a helper would only compete with them, and cost its start-up
    // for every chunk).
    ...(plan ? { hash: false, thread: false, ...(plan.start ? { start: plan.start } : {}), ...(plan.end !== undefined ? { end: plan.end } : {}) } : {}),
  });
  const progress = progressFor(file, how.quiet);
  let out: RunOutput;
  try {
    out = await runPasses(input, passes, { frameInterval: how.frameInterval, cell: how.cell, range: how.range, warnings, masses: parseMasses(opts.masses), onFrame: progress.tick });
  } finally {
    progress.stop();
  }
  return {
    ...out,
    input: {
      path: file,
      sha256: plan ? plan.sha256 : input.sha256(),
      bytes: plan ? plan.bytes : input.rawBytes(),
      format: input.format,
      frames: input.framesComplete(),
    },
  };
}

/** Write the partial results of a run (see src/partials.ts) atomically. */
export async function writePartialFile(target: string, run: TrajectoryRun, passes: Pass[], warnings: Warnings): Promise<void> {
  const inv = currentInvocation();
  const doc: PartialFile = {
    tool: 'sojourn',
    kind: 'partial',
    version: VERSION,
    argv: inv.args,
    command: inv.command,
    passes: passes.map((p) => p.name),
    input: { path: run.input.path, sha256: run.input.sha256, bytes: run.input.bytes, format: run.input.format },
    firstIndex: run.firstIndex,
    lastIndex: run.lastIndex,
    framesUsed: run.framesUsed,
    frameInterval: run.ctx.frameInterval,
    firstCell: run.ctx.firstCell ? Array.from(run.ctx.firstCell) : null,
    topology: encodeTopology(run.ctx.topology),
    partials: run.partials.map(encodePartial),
    warnings: [...warnings],
  };
  // Staged: the file appears only if the whole command succeeds (src/cli.ts commits it).
  await stageFile(target, JSON.stringify(doc));
}

/** Print warnings to stderr (unless quiet). */
export function printWarnings(warnings: Warnings, quiet?: boolean): void {
  if (quiet) return;
  for (const w of warnings) process.stderr.write(`sojourn: warning: ${w}\n`);
}

/**
 * Finish a command: with --json print the envelope on stdout, otherwise the human text; warnings
 * go to stderr in the human mode and into the envelope in JSON mode.
 */
export function emit(
  command: string,
  opts: { json?: boolean; quiet?: boolean },
  inputs: InputRecord[],
  options: Record<string, unknown>,
  results: unknown,
  warnings: Warnings,
  human: () => string,
): void {
  if (opts.json) {
    process.stdout.write(toJson(envelope(command, inputs, options, results, warnings)) + '\n');
  } else {
    process.stdout.write(human() + '\n');
    printWarnings(warnings, opts.quiet);
  }
}
