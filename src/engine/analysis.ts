/**
 * The analysis descriptor: everything the command line, the execution engine and the report need
 * to know about one analysis, exported by its own module (analyses/<name>.ts) and listed once in
 * the registry (analyses/index.ts).
 *
 * - `options`: the analysis's own options as data (src/engine/options.ts); the shared reading
 *   options (frames, cell, masses, threads, output) are added by the command builder.
 * - `configure`: parsed option values → the pass options, plain data (structured-clone and JSON
 *   safe), so that worker threads and partial-result files carry them instead of a command line.
 * - `pass`: the streaming pass for those options (src/types.ts `Pass`).
 * - `render`, `outputs`: the terminal text and the files (CSV) of a result.
 * - `sites` (optional): the second merge axis. When the pass stores coordinates of sites, its
 *   result is a function of sums over sites, so disjoint batches of sites read separately add
 *   up to one read (`--max-memory`).
 */
import type { Pass, PassContext } from '../types.js';
import type { OptionSpec, OptionValues } from './options.js';
import type { StoreOptions, StorePartial } from '../store/store.js';
import type { SiteLayout } from '../store/sites.js';
import type { LayoutSpec } from '../store/layout.js';
import type { FirstFrameInfo } from './batches.js';

/** A file an analysis writes from its result: the option naming it and the text(s). */
export interface OutputSpec<O, R> {
  /** Key of the option (declared in `options` with kind 'file') that names the file or prefix. */
  readonly option: string;
  /** [suffix, text] pairs: suffix '' for a single file, e.g. '-counts.csv' for a prefix. */
  write(result: R, options: O): Array<[string, string]>;
}

/** Reads made in batches: the records without coordinates and how memory was spent. */
export interface BatchRecord {
  /** The run's records without coordinates (frames, volume, drift, velocity source). */
  info: StorePartial;
  reads: number;
  bytesHeld: number;
  note: string;
}

/**
 * The site axis of a coordinate-storing analysis: sums over disjoint batches of sites add up,
 * and the result finishes from the total. S must be additive (`add` associative and
 * commutative over disjoint batches).
 */
export interface SiteAxis<O, S, R> {
  /** The site layout of these options, as data (resolved per topology by `resolveLayout`). */
  layout(options: O): LayoutSpec;
  /** Bytes per stored site and frame: for one read of all sites, and for a batch read. */
  bytesPerSiteFrame(options: O, first: FirstFrameInfo): { all: number; batch: number };
  /** Bytes per frame besides the sites (centre of mass, collective sums); default 48. */
  bytesPerFrame?: number;
  /** Store options of a batch read (the engine sets `sites`); `first` for the first read, which may keep more (e.g. collective sums). */
  store(options: O, first: boolean): Omit<StoreOptions, 'sites'>;
  /** The site sums of one batch read (`groupSites`: each group's sites within the batch store). */
  sums(store: StorePartial, layout: SiteLayout, groupSites: Int32Array[], ctx: PassContext, options: O): S;
  add(a: S, b: S): S;
  /** The result from the summed batches. */
  finish(sums: S, record: BatchRecord, layout: SiteLayout, ctx: PassContext, options: O): R;
}

/** An analysis of a trajectory, run as a pass over one read of the frames. */
export interface TrajectoryAnalysis<O = unknown, P = unknown, R = unknown> {
  readonly name: string;
  /** One line for the command's help. */
  readonly summary: string;
  readonly options: readonly OptionSpec[];
  /** Pass options (plain data) from the parsed values; UsageError on a bad combination. */
  configure(values: OptionValues): O;
  pass(options: O): Pass<P, R>;
  render(file: string, result: R, options: O): string;
  readonly outputs?: ReadonlyArray<OutputSpec<O, R>>;
  readonly sites?: SiteAxis<O, any, R>;
  /**
   * A distance the analysis needs within every frame's cell (half its smallest perpendicular
   * width must reach it) and the option that gave it, or null: checked by a pre-scan of the
   * cells before the read (src/engine/cells.ts), naming the first frame that falls short.
   */
  reach?(options: O): { distance: number; flag: string } | null;
}

/** Any analysis, for the registry. */
export type AnyAnalysis = TrajectoryAnalysis<any, any, any>;

/** Typed identity: lets a module declare its descriptor with inferred types. */
export function defineAnalysis<O, P, R>(d: TrajectoryAnalysis<O, P, R>): TrajectoryAnalysis<O, P, R> {
  return d;
}
