/**
 * Shared plumbing for the commands: common options, opening a trajectory and running passes
 * on it, progress on a TTY, and printing either the human table or the JSON envelope.
 * Only the CLI layer (src/cli.ts and src/commands/) reads argv-derived options.
 */
import { Command, Option } from 'commander';
import cliProgress from 'cli-progress';
import { parseFrameRange } from '../runner.js';
import { parseQuantity, UNIT_FACTORS } from '../units.js';
import { parseElements } from '../masses.js';
import { printable } from '../printable.js';
import { cellFromParameters, orthorhombicCell } from '../cell.js';
import { UsageError } from '../errors.js';
import { checkOutputFile, envelope, toJson, type InputRecord } from '../output.js';
import { execute, type ExecutePlan, type RunSource } from '../engine/execute.js';
import type { ReadSpec, TrajectoryRun } from '../engine/read.js';
import type { RecipePass } from '../engine/recipes.js';
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
  elements?: string;
  timeUnit?: string;
  velocityUnit?: string;
  /** A command's --temperature, when it has one: checked against the velocities' kinetic temperature. */
  temperature?: string;
  keepLaterCopy?: boolean;
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
    .option('--masses <pairs>', 'masses by atom label in g/mol, for labels that are not element symbols, e.g. "Sv=18,CH3=15.035" (0 for a massless site)')
    .option('--elements <pairs>', 'elements by atom label, for labels that are not element symbols or read two ways, e.g. "CA=C,OW=O" (masses: standard atomic weights)')
    .addOption(new Option('--time-unit <unit>', 'unit of the frame times in the file (default ps)').choices(Object.keys(UNIT_FACTORS.time)))
    .addOption(new Option('--velocity-unit <unit>', 'unit of the velocities in the file (default Å/ps)').choices(Object.keys(UNIT_FACTORS.velocity)))
    .option('--keep-later-copy', 'where frames repeat (a run continued from a restart appended to output it overlaps, or a frame written twice), use the later copy and leave out the earlier one')
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
    const text = part.slice(i + 1).trim();
    const value = text === '' ? NaN : Number(text);
    if (i <= 0 || !(value >= 0) || !Number.isFinite(value)) throw new UsageError(`--masses: expected LABEL=MASS pairs (g/mol, 0 for a massless site) separated by commas, got "${part}"`);
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
export type { TrajectoryRun } from '../engine/read.js';

/**
 * What a command knows besides its options: the command line it was started with (recorded in
 * partial-result files) and where its partials come from (a read, or files being merged).
 */
export interface CommandContext {
  /** The arguments after `sojourn` (command name first). */
  args: string[];
  source: RunSource;
}

/** The context of a plain run of `args`. */
export function readingContext(args: string[]): CommandContext {
  return { args, source: { kind: 'read' } };
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

/** The read description of a trajectory command's options (src/engine/read.ts). */
export function readSpecOf(file: string, opts: TrajectoryOptions): ReadSpec {
  const masses = parseMasses(opts.masses);
  const elements = parseElements(opts.elements);
  // The command checks its own --temperature; here it only serves the kinetic-temperature check.
  let temperature: number | null = null;
  if (typeof opts.temperature === 'string') {
    try {
      temperature = parseQuantity(opts.temperature, 'temperature', '--temperature', 'K');
    } catch {
      temperature = null;
    }
  }
  return {
    file,
    ...(opts.format ? { format: opts.format } : {}),
    strict: !!opts.strict,
    cell: opts.box ? parseBox(opts.box) : null,
    frameInterval: parsePositiveTime(opts.frameInterval, '--frame-interval'),
    ...(opts.frames ? { range: parseFrameRange(opts.frames) } : {}),
    ...(masses ? { masses: [...masses] } : {}),
    ...(elements ? { elements: [...elements] } : {}),
    ...(opts.timeUnit ? { timeUnit: opts.timeUnit, timeUnitGiven: true } : {}),
    ...(opts.velocityUnit ? { velocityUnit: opts.velocityUnit, velocityUnitGiven: true } : {}),
    ...(temperature !== null && temperature > 0 ? { temperature } : {}),
    ...(opts.keepLaterCopy ? { keepLater: true } : {}),
  };
}

/** --threads as a number, or null for the default. */
export function parseThreads(text: string | undefined): number | null {
  const threads = text === undefined ? null : Number(text);
  if (threads !== null && !(Number.isInteger(threads) && threads >= 1)) throw new UsageError(`--threads must be a whole number ≥ 1, got "${text}"`);
  return threads;
}

/** Options that describe the range and the run, not the analysis (left out of partial files). */
const RUN_KEYS = new Set(['frames', 'threads', 'partialOut']);

/**
 * The execution plan of a trajectory command's options: threads, where the partials come from,
 * the partial-result file to write, and progress on a TTY.
 */
export function runPlanOf(file: string, opts: TrajectoryOptions, cc: CommandContext): ExecutePlan {
  const threads = parseThreads(opts.threads);
  if (opts.partialOut) checkOutputFile(opts.partialOut, [file], '--partial-out');
  const progress = cc.source.kind === 'read' ? progressFor(file, opts.quiet) : null;
  const options = Object.fromEntries(Object.entries(opts).filter(([k]) => !RUN_KEYS.has(k)));
  return {
    threads,
    source: cc.source,
    ...(opts.partialOut ? { partialOut: { path: opts.partialOut, command: cc.args[0] ?? '', argv: cc.args.slice(1), options } } : {}),
    ...(progress ? { onFrame: progress.tick, onDone: progress.stop } : {}),
  };
}

/** Open `file`, run `passes` on one read of it (or merge partial files), describe the input. */
export async function runOnTrajectory(
  file: string,
  opts: TrajectoryOptions,
  passes: RecipePass[],
  warnings: Warnings,
  cc: CommandContext,
): Promise<TrajectoryRun> {
  const spec = readSpecOf(file, opts);
  return execute(passes, spec, runPlanOf(file, opts, cc), warnings);
}

/** Print warnings to stderr (unless quiet). */
export function printWarnings(warnings: Warnings, quiet?: boolean): void {
  if (quiet) return;
  for (const w of warnings) process.stderr.write(`sojourn: warning: ${printable(w)}\n`);
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
    process.stdout.write(printable(human()) + '\n');
    printWarnings(warnings, opts.quiet);
  }
}
