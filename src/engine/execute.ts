/**
 * The execution engine: run passes over one trajectory according to a plan — on one thread or
 * on frame chunks over several threads (src/engine/threads.ts), or, instead of reading, from the
 * partial-result files of separate jobs over frame ranges — and optionally write this run's
 * partials for a later merge. It knows nothing of the command line.
 */
import type { Pass, Warnings } from '../types.js';
import { UsageError, InputError } from '../errors.js';
import { stageFile } from '../output.js';
import { decodePartial, decodeTopology, encodePartial, encodeTopology, type PartialFile } from '../partials.js';
import { VERSION } from '../version.js';
import { readShare, type ReadSpec, type TrajectoryRun } from './read.js';
import { readOnThreads, type Chunk } from './threads.js';
import { recipeOf, withRecipe } from './recipes.js';
import { checksPass, judgeChecks, type ChecksPartial } from '../checks.js';
import { atomKinds } from '../masses.js';
import type { FileUnit } from '../output.js';
import { readFile } from 'node:fs/promises';
import { checkSequence, joinLogs, overlapDrops, KEEP_LATER_FLAG, type FrameLog } from '../sequence.js';
import type { Topology } from '../types.js';
import { evenSpacingPasses } from '../runner.js';

/** Where the partials come from: a read of the file, or partial-result files to merge. */
export type RunSource = { kind: 'read' } | { kind: 'partials'; docs: PartialFile[] };

/** How to run. */
export interface ExecutePlan {
  /** Threads, this one included; null = the number of cores for a plain file, 1 for gzip. */
  threads: number | null;
  source: RunSource;
  /** Also write the partials here (staged: it appears only when the command succeeds). */
  partialOut?: { path: string; command: string; argv: string[]; options: Record<string, unknown> };
  /** Told the number of frames used so far (one-thread reads). */
  onFrame?: (used: number) => void;
  onDone?: () => void;
}

/**
 * Run `passes` over the trajectory `spec` according to `plan`. Every read also runs the
 * plausibility checks (src/checks.ts) as a last pass: its verdicts are warnings, or an error
 * before any result is finished; the run records what it found (`checks`) and, in its input
 * record, the atoms' masses with their origin and the units the file was read in. With
 * `spec.keepLater`, a first read without passes records the frames and finds the earlier copies
 * of repeated frames (src/sequence.ts overlapDrops); they are set as `spec.drop` (once: later
 * reads of the same spec, e.g. site batches, reuse them) and named in a warning.
 */
export async function execute(commandPasses: Pass[], spec: ReadSpec, plan: ExecutePlan, warnings: Warnings): Promise<TrajectoryRun> {
  const passes = [...commandPasses, withRecipe(checksPass, { kind: 'checks', options: null })];
  let run: TrajectoryRun;
  if (plan.source.kind === 'partials') run = mergePartialFiles(spec.file, plan.source.docs, passes, warnings);
  else {
    if (spec.keepLater && spec.drop === undefined) await findOverlaps(spec, plan.threads, warnings);
    const local = (c: Chunk) => readShare(spec, passes, [], { range: c.range, plan: c.plan, share: true, ...(c.lead !== undefined ? { lead: c.lead } : {}) });
    const threaded = await readOnThreads(spec, passes, warnings, plan.threads, local);
    if (!threaded) {
      try {
        run = await readShare(spec, passes, warnings, { range: spec.range, plan: null, ...(plan.onFrame ? { onFrame: plan.onFrame } : {}) });
      } finally {
        plan.onDone?.();
      }
    } else {
      run = threaded;
      plan.onDone?.();
    }
    if (plan.partialOut) await writePartialFile(plan.partialOut, run, passes, warnings);
  }
  return judged(run, spec, warnings);
}

/** The run without the checks' partial, judged (src/checks.ts judgeChecks), its input record completed. */
function judged(run: TrajectoryRun, spec: ReadSpec, warnings: Warnings): TrajectoryRun {
  const name = spec.file === '-' ? '<stdin>' : spec.file;
  const partials = run.partials.slice(0, -1);
  run.ctx.file ??= name;
  const checks = checksPass.finish(run.partials[run.partials.length - 1] as ChecksPartial, run.ctx);
  const timeUnit = spec.timeUnit ?? 'ps';
  const velocityUnit = spec.velocityUnit ?? 'A/ps';
  judgeChecks(
    checks,
    {
      file: name,
      temperature: spec.temperature ?? null,
      timeUnit,
      timeUnitGiven: !!spec.timeUnitGiven,
      velocityUnit,
      velocityUnitGiven: !!spec.velocityUnitGiven,
      intervalFromOption: checks.timedFrames === 0,
    },
    warnings,
  );
  const fileUnits: Record<string, FileUnit> = {
    lengths: { unit: 'A', from: run.input.format === 'pdb' ? 'file' : 'assumed' },
  };
  if (checks.timedFrames > 0) fileUnits.time = { unit: timeUnit, from: spec.timeUnitGiven ? '--time-unit' : 'assumed' };
  if (checks.velocityFramesSeen > 0) fileUnits.velocities = { unit: velocityUnit, from: spec.velocityUnitGiven ? '--velocity-unit' : 'assumed' };
  return { ...run, partials, checks, input: { ...run.input, atomKinds: atomKinds(run.ctx.topology), fileUnits } };
}

/** The earlier copies of repeated frames of `spec`, from a read that only records the frames. */
async function findOverlaps(spec: ReadSpec, threads: number | null, warnings: Warnings): Promise<void> {
  if (spec.file === '-') throw new UsageError(`${KEEP_LATER_FLAG} reads the input twice (first to find the repeated frames): give a file, not standard input`);
  const probe: ReadSpec = { ...spec, keepLater: false };
  const local = (c: Chunk) => readShare(probe, [], [], { range: c.range, plan: c.plan, share: true, ...(c.lead !== undefined ? { lead: c.lead } : {}) });
  const scratch: Warnings = [];
  const frames =
    (await readOnThreads(probe, [], scratch, threads, local, { checkSequence: false }))?.frames ??
    (await readShare(probe, [], scratch, { range: spec.range, plan: null, share: true })).frames;
  const { drop, notes } = overlapDrops(frames);
  spec.drop = drop;
  const name = spec.file === '-' ? '<stdin>' : spec.file;
  for (const n of notes) warnings.push(`${name}: ${KEEP_LATER_FLAG}: left out the earlier copy of repeated frames: ${n}`);
}

/** Write the partial results of a run (see src/partials.ts), staged until the command succeeds. */
async function writePartialFile(target: NonNullable<ExecutePlan['partialOut']>, run: TrajectoryRun, passes: Pass[], warnings: Warnings): Promise<void> {
  const doc: PartialFile = {
    tool: 'sojourn',
    kind: 'partial',
    version: VERSION,
    argv: target.argv,
    command: target.command,
    options: target.options,
    passes: passes.map((p) => p.name),
    recipes: passes.map(recipeOf),
    input: { path: run.input.path, sha256: run.input.sha256, bytes: run.input.bytes, format: run.input.format },
    firstIndex: run.firstIndex,
    lastIndex: run.lastIndex,
    framesUsed: run.framesUsed,
    frameInterval: run.ctx.frameInterval,
    firstCell: run.ctx.firstCell ? Array.from(run.ctx.firstCell) : null,
    topology: encodeTopology(run.ctx.topology),
    frames: encodePartial(run.frames),
    partials: run.partials.map(encodePartial),
    warnings: [...warnings],
  };
  await stageFile(target.path, JSON.stringify(doc));
}

/** Options that do not take part in the same-options check (they differ between jobs by design). */
const RANGE_OPTIONS = new Set(['frames', 'threads', 'partialOut', 'json', 'quiet']);

/** The options of a partial file without the range and output ones, for comparison. */
export function optionsForComparison(options: Record<string, unknown> | undefined): string {
  const o = Object.entries(options ?? {}).filter(([k]) => !RANGE_OPTIONS.has(k));
  o.sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0));
  return JSON.stringify(o);
}

/**
 * Load the partial files of jobs that analysed frame ranges of one trajectory, in frame order.
 * They must come from the same command with the same options and the same input file.
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
  const first = docs[0]!;
  for (const [i, d] of docs.entries()) {
    if (d.command !== first.command || optionsForComparison(d.options) !== optionsForComparison(first.options)) {
      throw new UsageError(`${paths[i]} was written by "${[d.command, ...d.argv].join(' ')}", not the same command and options as ${paths[0]}`);
    }
    if (d.input.sha256 !== first.input.sha256) {
      throw new UsageError(`${paths[i]} comes from a different input file (SHA-256 differs from ${paths[0]})`);
    }
  }
  docs.sort((a, b) => a.firstIndex - b.firstIndex);
  return docs;
}

/**
 * The run that the partial files add up to, merged with the passes' own `merge` in frame order.
 * The jobs' frames are checked together as one read checks them: the same atoms in every job,
 * and the joined frame records through the sequence checks (src/sequence.ts), whose interval
 * between frames is the merged run's.
 */
function mergePartialFiles(file: string, docs: PartialFile[], passes: Pass[], warnings: Warnings): TrajectoryRun {
  const names = passes.map((p) => p.name);
  for (const d of docs) {
    if (JSON.stringify(d.passes) !== JSON.stringify(names)) {
      throw new UsageError(`partial file passes [${d.passes.join(', ')}] do not match this command's [${names.join(', ')}]`);
    }
  }
  for (let i = 1; i < docs.length; i++) {
    if (docs[i]!.firstIndex <= docs[i - 1]!.lastIndex) {
      throw new UsageError(`partial files overlap: frames ${docs[i - 1]!.firstIndex}–${docs[i - 1]!.lastIndex} and ${docs[i]!.firstIndex}–${docs[i]!.lastIndex}`);
    }
  }
  for (const d of docs) warnings.push(...d.warnings);
  const name = file === '-' ? '<stdin>' : file;
  const logs = docs.map((d) => {
    if (d.frames === undefined) throw new UsageError(`a partial file of frames ${d.firstIndex}–${d.lastIndex} has no record of its frames (written by an older sojourn): run its job again`);
    return decodePartial(d.frames) as FrameLog;
  });
  const topologies = docs.map((d) => decodeTopology(d.topology));
  for (let i = 1; i < docs.length; i++) sameAtoms(name, docs[0]!.input.format, topologies[0]!, topologies[i]!, logs[i]!);
  const log = joinLogs(logs);
  const interval = checkSequence(
    log,
    { file: name, format: docs[0]!.input.format, evenSpacing: evenSpacingPasses(passes), range: { from: docs[0]!.firstIndex, to: Infinity, stride: 1 }, userInterval: null, merging: true },
    warnings,
  );
  const parts = docs.map((d) => d.partials.map(decodePartial));
  let merged = parts[0]!;
  for (let i = 1; i < parts.length; i++) merged = merged.map((m, k) => passes[k]!.merge(m, parts[i]![k]));
  const d0 = docs[0]!;
  return {
    ctx: {
      topology: topologies[0]!,
      firstCell: d0.firstCell ? Float64Array.from(d0.firstCell) : null,
      frameInterval: interval ?? d0.frameInterval,
      warnings,
    },
    partials: merged,
    framesUsed: docs.reduce((s, d) => s + d.framesUsed, 0),
    firstIndex: d0.firstIndex,
    lastIndex: docs[docs.length - 1]!.lastIndex,
    frames: log,
    input: { path: file, sha256: d0.input.sha256, bytes: d0.input.bytes, format: d0.input.format, frames: null },
  };
}

/**
 * A later job's atoms must be the first job's, checked at its first frame in the words of the
 * readers (the line of the frame for a count, of the atom's row in an XYZ file for a label).
 */
function sameAtoms(file: string, format: string, t0: Topology, t: Topology, log: FrameLog): void {
  const frame = log.count > 0 ? log.index[0]! + 1 : 0;
  const line = log.count > 0 ? log.line[0]! : null;
  if (t.atoms !== t0.atoms) {
    throw new InputError(file, line, format === 'xyz' ? 1 : null, `frame ${frame} has ${t.atoms} atoms, but the first frame has ${t0.atoms} (every frame must have the same atoms)`);
  }
  const k = t.labels.findIndex((x, i) => x !== t0.labels[i]);
  if (k >= 0) {
    throw new InputError(
      file,
      line !== null && format === 'xyz' ? line + 2 + k : line,
      null,
      `atom ${k + 1} of frame ${frame} is ${format === 'pdb' ? 'named' : 'labelled'} '${t.labels[k]}', but '${t0.labels[k]}' in the first frame (every frame must list the same atoms in the same order)`,
    );
  }
}
