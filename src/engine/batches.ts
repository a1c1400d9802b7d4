/**
 * Site batches under a memory bound (`--max-memory`), the second merge axis of the engine: the analyses that keep whole time series (msd, vacf, conductivity, diffusion)
 * hold 24 bytes per stored site and frame (48 with velocities). When the selected sites × frames
 * would exceed the limit, the sites are split into batches and the file is read once per batch,
 * each read storing only that batch's sites (`storePass` with `sites`). Every curve the analyses
 * need is a sum over sites (analyses/msd.ts `GroupSums`), so the batches' sums add up to those of
 * one read, and the results agree to round-off. Batched reads run on one thread (the frames of a
 * batch are not split over workers) and cannot write --partial-out.
 *
 * The VACF (analyses/vacf.ts `VacfGroupSums`) is a site sum as well: vacf and diffusion add its
 * batch sums before the division by the number of sites. `readStoreInBatches` is the loop those
 * commands and the report share: one coordinate store per read holding the batch's sites (the
 * first read may carry further passes, e.g. the report's streaming analyses), and the run's
 * records (cell, drift, unwrapping, collective charge sums) without coordinates afterwards.
 */
import { openTrajectory } from '../../readers/index.js';
import { countFrames } from '../../readers/scan.js';
import { UsageError } from '../errors.js';
import { execute, type RunSource } from './execute.js';
import type { ReadSpec, TrajectoryRun } from './read.js';
import type { Pass, PassContext, Topology, Warnings } from '../types.js';
import { resolveLayout, type LayoutSpec } from '../store/layout.js';
import type { SiteLayout } from '../store/sites.js';
import { storeBytes, storePass, type StoreOptions, type StorePartial } from '../store/store.js';

const UNITS: Record<string, number> = {
  b: 1,
  kb: 1e3,
  mb: 1e6,
  gb: 1e9,
  tb: 1e12,
  kib: 2 ** 10,
  mib: 2 ** 20,
  gib: 2 ** 30,
  tib: 2 ** 40,
};

/**
 * Parse a memory size such as "512MB", "2GB", "1.5GiB" or "800M" into bytes: decimal units
 * kB, MB, GB, TB (10³ⁿ, SI) and binary KiB, MiB, GiB, TiB (2¹⁰ⁿ, IEC 80000-13); a bare letter
 * K/M/G/T is read as the decimal unit; a bare number is bytes.
 */
export function parseByteSize(text: string, what = '--max-memory'): number {
  const m = /^\s*(\d+(?:\.\d+)?|\.\d+)\s*([a-z]*)\s*$/i.exec(text);
  const unit = m ? m[2]!.toLowerCase() : '';
  const key = unit === '' ? 'b' : unit.length === 1 && unit !== 'b' ? `${unit}b` : unit;
  const factor = UNITS[key];
  if (!m || factor === undefined) throw new UsageError(`${what}: expected a size such as 512MB, 2GB or 1.5GiB, got "${text}"`);
  const bytes = Number(m[1]) * factor;
  if (!(bytes > 0)) throw new UsageError(`${what} must be positive, got "${text}"`);
  return Math.floor(bytes);
}

/** What a batched run reads and under which limit. */
export interface BatchRequest {
  spec: ReadSpec;
  /** --max-memory as given (e.g. "512MB"), or undefined for no limit. */
  maxMemory: string | undefined;
  source: RunSource;
  /** A partial-result file was asked for (it cannot be written by several reads). */
  partialOut: boolean;
}

/** How the sites of a run are split into batches. */
export interface SiteBatchPlan {
  /** Site indices (into the layout's SiteMap) of each batch, increasing. */
  batches: Int32Array[];
  /** Frames the run will use and sites in the layout. */
  frames: number;
  sites: number;
  /** Bytes one read of all sites would hold, and the limit. */
  bytesNeeded: number;
  limit: number;
}

/** What the first frame of a file tells a plan: its topology and whether it carries velocities. */
export interface FirstFrameInfo {
  topology: Topology;
  velocities: boolean;
}

/** Bytes per stored site and frame: a number, or a rule on the first frame (e.g. 48 with velocities, else 24). */
export type BytesPerSiteFrame = number | ((first: FirstFrameInfo) => number);

/** Topology and velocity presence of the first frame of a file (read and stopped). */
async function firstFrame(spec: ReadSpec): Promise<FirstFrameInfo> {
  const input = await openTrajectory(spec.file, { ...(spec.format ? { format: spec.format } : {}), strict: false, warnings: [] });
  for await (const f of input.frames()) return { topology: f.topology, velocities: f.velocities !== null };
  throw new UsageError(`${spec.file}: no complete frame`);
}

/**
 * Plan the site batches for a memory limit: sites × frames × bytesPerSiteFrame (+ bytesPerFrame,
 * default 48, per frame for the centre-of-mass and collective series) against `limit`; batches are sized with
 * batchBytesPerSiteFrame (a batched read may hold less per site, e.g. no site velocities). Either
 * may be a rule on the first frame (`BytesPerSiteFrame`). Null when there is no limit, when
 * partial files are being merged, or when one read fits. Reads the first frame for the layout and
 * counts the frames of the file.
 */
export async function planSiteBatches(
  req: BatchRequest,
  layout: LayoutSpec,
  bytesPerSiteFrame: BytesPerSiteFrame,
  batchBytesPerSiteFrame: BytesPerSiteFrame = bytesPerSiteFrame,
  bytesPerFrame = 48,
): Promise<SiteBatchPlan | null> {
  if (req.maxMemory === undefined || req.source.kind === 'partials') return null;
  const { spec } = req;
  const file = spec.file;
  const limit = parseByteSize(req.maxMemory);
  if (file === '-') throw new UsageError('--max-memory needs a file: standard input cannot be read more than once');
  const total = await countFrames(file, spec.format);
  let frames = total;
  if (spec.range) {
    const r = spec.range;
    frames = Math.max(0, Math.ceil((Math.min(total, r.to) - r.from) / r.stride));
  }
  const first = await firstFrame(spec);
  const sites = resolveLayout(layout, first.topology).map.count;
  const rule = (b: BytesPerSiteFrame) => (typeof b === 'number' ? b : b(first));
  bytesPerSiteFrame = rule(bytesPerSiteFrame);
  batchBytesPerSiteFrame = rule(batchBytesPerSiteFrame);
  const perFrameExtra = bytesPerFrame;
  const bytesNeeded = sites * frames * bytesPerSiteFrame + frames * perFrameExtra;
  if (bytesNeeded <= limit) return null;
  const perSite = Math.max(1, frames) * batchBytesPerSiteFrame;
  const fit = Math.floor((limit - frames * perFrameExtra) / perSite);
  if (fit < 1) {
    throw new UsageError(
      `--max-memory ${req.maxMemory} cannot hold even one site's ${frames} frames (${(perSite + frames * perFrameExtra).toLocaleString('en')} bytes)`,
    );
  }
  if (req.partialOut) throw new UsageError('--partial-out cannot be combined with a --max-memory that needs several reads of the file');
  const batches: Int32Array[] = [];
  const count = Math.ceil(sites / fit);
  const per = Math.ceil(sites / count); // balanced batches
  for (let a = 0; a < sites; a += per) batches.push(Int32Array.from({ length: Math.min(per, sites - a) }, (_, i) => a + i));
  return { batches, frames, sites, bytesNeeded, limit };
}

/**
 * Per group of the layout, the positions (in `batch`) of the group's sites that the batch holds:
 * the site indices of that group in the batch's store.
 */
export function groupSitesInBatch(layout: SiteLayout, batch: Int32Array): Int32Array[] {
  const pos = new Map<number, number>();
  batch.forEach((s, i) => pos.set(s, i));
  return layout.groups.map((g) => Int32Array.from(Array.from(g.sites).filter((s) => pos.has(s)), (s) => pos.get(s)!));
}

/**
 * Read the file once per batch (on one thread), calling `each` with the run of every read; when
 * `each` returns false the remaining batches are not read. Warnings repeated by every read are
 * kept once.
 */
export async function readInBatches(
  req: BatchRequest,
  plan: SiteBatchPlan,
  passesFor: (batch: Int32Array, index: number) => Pass[],
  warnings: Warnings,
  each: (run: TrajectoryRun, batch: Int32Array, index: number) => void | boolean,
): Promise<void> {
  const seen = new Set(warnings);
  for (const [i, batch] of plan.batches.entries()) {
    const w: string[] = [];
    // A batch read runs on one thread: its store is built for the batch's sites here.
    const run = await execute(passesFor(batch, i), req.spec, { threads: 1, source: req.source }, w);
    for (const x of w) {
      if (!seen.has(x)) {
        seen.add(x);
        warnings.push(x);
      }
    }
    if (each(run, batch, i) === false) break;
  }
}

/** Outcome of `readStoreInBatches`. */
export interface BatchedStoreRun {
  /** The first read: its input record and partials (index 0, the store's, is dropped (null); then the extra passes'). */
  first: TrajectoryRun;
  /** The run's context with the command's warnings. */
  ctx: PassContext;
  /**
   * The run's records without coordinates: frames, cell volume, drift (centre-of-mass series),
   * velocity source and the first read's collective charge sums; unwrapping records counted once.
   */
  info: StorePartial;
  /** Reads made, the largest store held at once (bytes) and the note for the result (`batchNote`: the plan's batches). */
  reads: number;
  bytesHeld: number;
  note: string;
}

/**
 * Read the file once per batch of sites with a coordinate store holding that batch
 * (`store(batch, index)` gives its options; `sites` is set here), plus `firstPasses` on the
 * first read only, and hand each read's store to `each` (the analyses add their site sums
 * there); `each` returning false ends the reading early. Long unwrapping steps: a later read
 * whose unwrapped atoms the first read unwrapped too (drift removal or collective sums make the
 * first read unwrap all of them) adds nothing to the first read's count; otherwise (disjoint
 * batches) the counts add.
 */
export async function readStoreInBatches(
  req: BatchRequest,
  plan: SiteBatchPlan,
  store: (batch: Int32Array, index: number) => Omit<StoreOptions, 'sites'>,
  warnings: Warnings,
  each: (store: StorePartial, batch: Int32Array, run: TrajectoryRun, index: number) => void | boolean,
  firstPasses: Pass[] = [],
): Promise<BatchedStoreRun> {
  let first: TrajectoryRun | null = null;
  let lastCtx: PassContext | null = null;
  let info: StorePartial | null = null;
  let firstUnwrapped: Set<number> | null = null;
  let held = 0;
  let reads = 0;
  const passesFor = (sites: Int32Array, i: number): Pass[] => [storePass({ ...store(sites, i), sites: Array.from(sites) }) as Pass, ...(i === 0 ? firstPasses : [])];
  await readInBatches(req, plan, passesFor, warnings, (run, batch, i) => {
    const s = run.partials[0] as StorePartial;
    reads++;
    // Nothing below may keep a read's store (its coordinates) past this call, or two batches
    // would be held at once during the next read: the first read is kept without its store.
    first ??= { ...run, partials: [null, ...run.partials.slice(1)] };
    lastCtx = run.ctx;
    held = Math.max(held, storeBytes(s));
    // No coordinates; an empty velocity list (not null) keeps the velocity source ('file').
    if (!info) info = { ...s, chunks: [], chunkFrames: [], velocityChunks: s.velocityChunks ? [] : null };
    else {
      // A read whose atoms were all unwrapped by the first read already (the same atoms, or a
      // batch of the atoms the first read unwrapped for its collective sums) adds no new steps.
      firstUnwrapped ??= new Set(info.unwrapAtoms);
      const seen = firstUnwrapped;
      const covered = s.unwrapAtoms.every((a) => seen.has(a));
      if (!covered) info = { ...info, longSteps: info.longSteps + s.longSteps, maxStepFraction: Math.max(info.maxStepFraction, s.maxStepFraction) };
    }
    return each(s, batch, run, i);
  });
  return { first: first!, ctx: { ...lastCtx!, warnings }, info: info!, reads, bytesHeld: held, note: batchNote(plan, held) };
}

/** Text for the result: how many reads and how much was held (MB = 10⁶ bytes, three significant figures). */
export function batchNote(plan: SiteBatchPlan, bytesHeld: number): string {
  const mb = (bytes: number) => `${Number((bytes / 1e6).toPrecision(3))} MB`;
  return (
    `--max-memory ${mb(plan.limit)}: ${plan.sites} sites × ${plan.frames} frames would need ` +
    `${mb(plan.bytesNeeded)}, so the sites were processed in ${plan.batches.length} batches over ` +
    `${plan.batches.length} reads of the file (at most ${mb(bytesHeld)} held at once)`
  );
}

