/**
 * `--max-memory`: the analyses that keep whole time series (msd, vacf, conductivity, diffusion)
 * hold 24 bytes per stored site and frame (48 with velocities). When the selected sites × frames
 * would exceed the limit, the sites are split into batches and the file is read once per batch,
 * each read storing only that batch's sites (`storePass` with `sites`). Every curve the analyses
 * need is a sum over sites (analyses/msd.ts `GroupSums`), so the batches' sums add up to those of
 * one read, and the results agree to round-off. Batched reads run on one thread (the frames of a
 * batch are not split over workers) and cannot write --partial-out.
 */
import { openTrajectory } from '../../readers/index.js';
import { countFrames } from '../../readers/scan.js';
import { parseFrameRange } from '../runner.js';
import { UsageError } from '../errors.js';
import { mergeSource } from './parallel.js';
import { runOnTrajectory, type TrajectoryOptions, type TrajectoryRun } from './common.js';
import type { Pass, Topology, Warnings } from '../types.js';
import type { SiteLayout } from '../../analyses/msd.js';

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

/** Topology of the first frame of a file (read and stopped). */
async function firstTopology(file: string, opts: TrajectoryOptions): Promise<Topology> {
  const input = await openTrajectory(file, { format: opts.format, strict: false, warnings: [] });
  for await (const f of input.frames()) return f.topology;
  throw new UsageError(`${file}: no complete frame`);
}

/**
 * Plan the site batches for a memory limit: sites × frames × bytesPerSiteFrame (+ 48 bytes per
 * frame for the centre-of-mass and collective series) against `limit`; batches are sized with
 * batchBytesPerSiteFrame (a batched read may hold less per site, e.g. no site velocities). Null when there is no
 * limit, when partial files are being merged, or when one read fits. Reads the first frame for
 * the layout and counts the frames of the file.
 */
export async function planSiteBatches(
  file: string,
  opts: TrajectoryOptions & { maxMemory?: string },
  layout: (t: Topology) => SiteLayout,
  bytesPerSiteFrame: number,
  batchBytesPerSiteFrame = bytesPerSiteFrame,
): Promise<SiteBatchPlan | null> {
  if (opts.maxMemory === undefined || mergeSource()) return null;
  const limit = parseByteSize(opts.maxMemory);
  if (file === '-') throw new UsageError('--max-memory needs a file: standard input cannot be read more than once');
  const total = await countFrames(file, opts.format);
  let frames = total;
  if (opts.frames) {
    const r = parseFrameRange(opts.frames);
    frames = Math.max(0, Math.ceil((Math.min(total, r.to) - r.from) / r.stride));
  }
  const sites = layout(await firstTopology(file, opts)).map.count;
  const perFrameExtra = 48;
  const bytesNeeded = sites * frames * bytesPerSiteFrame + frames * perFrameExtra;
  if (bytesNeeded <= limit) return null;
  const perSite = Math.max(1, frames) * batchBytesPerSiteFrame;
  const fit = Math.floor((limit - frames * perFrameExtra) / perSite);
  if (fit < 1) {
    throw new UsageError(
      `--max-memory ${opts.maxMemory} cannot hold even one site's ${frames} frames (${(perSite + frames * perFrameExtra).toLocaleString('en')} bytes)`,
    );
  }
  if (opts.partialOut) throw new UsageError('--partial-out cannot be combined with a --max-memory that needs several reads of the file');
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
 * Read the file once per batch (on one thread), calling `each` with the run of every read.
 * Warnings repeated by every read are kept once.
 */
export async function readInBatches(
  file: string,
  opts: TrajectoryOptions,
  plan: SiteBatchPlan,
  passesFor: (batch: Int32Array, index: number) => Pass[],
  warnings: Warnings,
  each: (run: TrajectoryRun, batch: Int32Array, index: number) => void,
): Promise<void> {
  const seen = new Set(warnings);
  for (const [i, batch] of plan.batches.entries()) {
    const w: string[] = [];
    const run = await runOnTrajectory(file, { ...opts, threads: '1' }, passesFor(batch, i), w);
    for (const x of w) {
      if (!seen.has(x)) {
        seen.add(x);
        warnings.push(x);
      }
    }
    each(run, batch, i);
  }
}

/** Text for the result: how many reads and how much was held. */
export function batchNote(plan: SiteBatchPlan, bytesHeld: number): string {
  return (
    `--max-memory ${(plan.limit / 1e6).toFixed(0)} MB: ${plan.sites} sites × ${plan.frames} frames would need ` +
    `${(plan.bytesNeeded / 1e6).toFixed(0)} MB, so the sites were processed in ${plan.batches.length} batches over ` +
    `${plan.batches.length} reads of the file (at most ${(bytesHeld / 1e6).toFixed(1)} MB held at once)`
  );
}
