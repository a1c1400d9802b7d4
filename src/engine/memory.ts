/**
 * Analyses on frames a script already holds in memory (the library's entry to the engine):
 * the frames go through the analysis's pass exactly as a file's frames do, one stream, and the
 * result is finished the same way.
 */
import type { CellMatrix, Frame, Topology } from '../types.js';
import { runPasses, type FrameSource } from '../runner.js';
import { readOptionValues } from './options.js';
import { UsageError } from '../errors.js';
import { ANALYSES } from '../../analyses/index.js';
import { buildTopology } from '../../readers/common.js';

/** Frames from an array or a (sync or async) iterable, as a frame source named `path`. */
export function memorySource(frames: Iterable<Frame> | AsyncIterable<Frame>, path = '<memory>'): FrameSource {
  return {
    path,
    async *frames() {
      for await (const f of frames) yield f;
    },
  };
}

/**
 * A topology for atoms with these labels: elements from the labels (exact symbols), masses in
 * g/mol from `masses` by label where given, else the element's standard atomic weight (IUPAC).
 */
export function topologyOf(labels: string[], masses: Record<string, number> = {}): Topology {
  const t = buildTopology(labels, null, null, null);
  labels.forEach((l, i) => {
    const m = masses[l];
    if (m !== undefined) t.masses[i] = m;
  });
  return t;
}

/** How to read frames held in memory. */
export interface MemoryRunOptions {
  /** Time between frames in ps, when the frames carry no times. */
  frameInterval?: number;
  /** Cell (Å) for frames that carry none. */
  cell?: CellMatrix;
  /** Warnings are appended here. */
  warnings?: string[];
}

/**
 * Run the registered analysis `name` with options written as on the command line (e.g.
 * `{ cutoff: '3.2A', segments: '4' }`, flags as `true`, repeatable options as arrays) on
 * `frames`; returns its result object (the same as `sojourn NAME --json` gives under "results").
 */
export async function analyseFrames(
  name: string,
  options: Record<string, string | boolean | string[]>,
  frames: Iterable<Frame> | AsyncIterable<Frame>,
  run: MemoryRunOptions = {},
): Promise<unknown> {
  const d = ANALYSES.find((a) => a.name === name);
  if (!d) throw new UsageError(`no analysis named "${name}"; known: ${ANALYSES.map((a) => a.name).join(', ')}`);
  const o = d.configure(readOptionValues(d.options, options));
  const pass = d.pass(o);
  const out = await runPasses(memorySource(frames), [pass], {
    frameInterval: run.frameInterval ?? null,
    cell: run.cell ?? null,
    warnings: run.warnings ?? [],
  });
  return pass.finish(out.partials[0], out.ctx);
}
