/**
 * Radial distribution functions g_AB(r) with running coordination numbers, shell positions and
 * block uncertainties, as a streaming Pass.
 *
 * Normalisation (stated once, used everywhere):
 *   g_AB(r_k) = C_k / (N_pairs · Σ_f (V_k / V_f)),   V_k = (4π/3)(r_{k+1}³ − r_k³),
 * where C_k is the number of ordered pairs (i ∈ A, j ∈ B, j ≠ i) with r_ij in bin k summed over
 * the frames f, V_f the volume of frame f and N_pairs the effective number of ordered pairs:
 * N_A·N_B − N_{A∩B} (self-pairs) − N_intra (same-molecule pairs when excluded); N_A(N_A − 1) for
 * A = B. This is g_AB = ⟨Σ_{i∈A} Σ_{j∈B, j≠i} δ(r − r_ij)⟩ / (N_A ρ_B 4πr²dr) with
 * ρ_B = N_pairs / (N_A V) (= N_B/V for disjoint selections, (N_B − 1)/V for A = B), and for a
 * varying cell (NPT) the ideal-gas count of every frame is taken with that frame's own volume:
 * the ratio of the observed pairs to the ideal-gas pairs expected in the same frames.
 *
 * Running coordination number n(r) = 4πρ̄_B ∫_0^r g r'² dr' with ρ̄_B = (N_pairs/N_A)·⟨1/V⟩; with
 * g constant inside each bin the integral is exact, and n(r) equals the mean number of B atoms
 * within r of an A atom (for any cell fluctuation). Values are given at the bin centres.
 *
 * Shells: the curve is smoothed with the 7-point quadratic Savitzky–Golay filter (A. Savitzky &
 * M. J. E. Golay, Anal. Chem. 36, 1627 (1964), Table I: (−2, 3, 6, 7, 6, 3, −2)/21); the first
 * peak is the maximum of the first excursion of the smoothed g above 1 that holds at least
 * MIN_PEAK_COUNTS pair counts; the first minimum is the lowest smoothed value between the end of
 * that excursion and the start of the next one (the middle of a run of equal lowest values).
 *
 * Uncertainty: frames are accumulated in contiguous chunks keyed by frame index (merge is exact
 * and associative); at the end the chunks are grouped into B blocks contiguous in time, g and
 * the coordination number are computed in each, and the standard error is SD/√B. Unless the
 * user sets B, it is chosen so that each block spans at least BLOCK_LENGTH_FACTOR statistical
 * inefficiencies of the per-frame coordination number (analyses/converge.ts), measured at the
 * stored radius closest to the first minimum (per-frame counts are kept at radii
 * COARSE_STEP apart, as float32: 4 bytes per frame per stored radius per pair).
 *
 * Files: the pure computations on histograms and curves are in analyses/rdf-curves.ts, the
 * finishing of the pass (blocks, shells, optional quantities) in analyses/rdf-finish.ts.
 */
import type { Frame, Pass, PassContext, Quantity, CellMatrix } from '../src/types.js';
import type { Estimate, Reason } from '../src/estimate.js';
import { CellGeometry } from '../src/cell.js';
import { PairHistogram, type SearchMethod } from '../src/neighbors.js';
import { parseSelection, selectAtoms } from '../src/selection.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import type { LennardJones, SqWindow } from './structure.js';
import { finishRdf } from './rdf-finish.js';

/** Most chunks kept per partial before neighbouring chunks are combined (memory bound). */
export const MAX_CHUNKS = 256;
/** Spacing (Å) of the radii at which per-frame cumulative counts are kept. */
export const COARSE_STEP = 0.25;


/** One requested pair of selections. */
export interface PairRequest {
  a: string;
  b: string;
}

/** Configuration of the g(r) pass (already parsed and checked by the command layer). */
export interface RdfSpec {
  pairs: PairRequest[];
  /** Requested r_max (Å); null = half the smallest perpendicular width of the first cell. */
  rMax: number | null;
  binWidth: number;
  skipSameMolecule: boolean;
  /** Fixed block count, or null for the automatic rule. */
  blocks: number | null;
  method?: SearchMethod;
  structureFactor?: { qMax: number; qStep: number; window: SqWindow } | null;
  lennardJones?: LennardJones | null;
  temperature?: number | null;
  kirkwoodBuff?: boolean;
}

/** Frames of one contiguous range of frame indices. */
export interface RdfChunk {
  /** ⌊frame index / chunkSize⌋. */
  key: number;
  frames: number;
  /** Σ 1/V_f (Å⁻³). */
  inverseVolume: number;
  /** Σ V_f (Å³). */
  volume: number;
  /** Ordered-pair counts per requested pair. */
  counts: Float64Array[];
}

/** What the pass accumulates (plain data and typed arrays only). */
export interface RdfPartial {
  nbins: number;
  binWidth: number;
  /** Bins between stored per-frame radii. */
  coarseStride: number;
  chunkSize: number;
  chunks: RdfChunk[];
  frames: number;
  /** Per pair: per-frame mean count of B within each stored radius (frames × K values, K = ⌊nbins/coarseStride⌋). */
  coarse: Float32Array[];
  pairs: Array<{ a: string; b: string; nA: number; nB: number; orderedPairs: number; same: boolean }>;
  pairsExamined: number;
  cellFrames: number;
  bruteFrames: number;
}

/** Result for one pair. */
export interface RdfPairResult {
  a: string;
  b: string;
  nA: number;
  nB: number;
  /** ρ̄_B used in n(r) (1/Å³). */
  density: Quantity;
  r: number[];
  g: number[];
  n: number[];
  gError: (number | null)[];
  firstPeak: { r: number; g: number } | null;
  firstMinimum: { r: number; g: number } | null;
  /** n at the first minimum, window 0 … r_min (Å), verdict from the first-shell and block checks; null without a first minimum. */
  coordinationNumber: Estimate | null;
  blocks: number;
  blockRule: string;
  statisticalInefficiency: number | null;
  smoothing: string;
  converged: boolean;
  notes: string[];
  /** The notes, coded (src/estimate.ts), one for one. */
  reasons: Reason[];
  structureFactor?: {
    q: number[];
    s: number[];
    sError: (number | null)[];
    window: string;
    density: Quantity;
    /** Smallest q given, 2π/r_max (1/Å): below it S(q) is set by the truncation of g(r). */
    qMin: Quantity;
    note: string;
  } | null;
  lennardJones?: {
    epsilon: Quantity; sigma: Quantity; cutoff: Quantity; energy: Quantity; energyTail: Quantity;
    pressure: Quantity | null; pressureTail: Quantity | null; note: string;
  } | null;
  kirkwoodBuff?: {
    r: number[];
    running: number[];
    /** Finite-volume integrals G_V(L) of a spherical subvolume of diameter L = r (Krüger et al. 2013). */
    finiteVolume: number[];
    runningAtRMax: Quantity;
    /** G_V(L = r_max): a finite-volume integral, not the infinite-system value. */
    finiteVolumeAtRMax: Quantity;
    /** G∞ from L·G_V(L) = L·G∞ + F over the stated linear range. */
    infinite: Quantity;
    extrapolation: {
      from: Quantity;
      to: Quantity;
      points: number;
      surfaceTerm: Quantity;
      /** Least-squares slope error (departure from a line) and block standard error of G∞. */
      fitError: Quantity;
      blockError: Quantity | null;
    };
    method: string;
  } | null;
}

/** Result of the pass. */
export interface RdfResult {
  pairs: RdfPairResult[];
  rMax: Quantity;
  binWidth: Quantity;
  frames: number;
  search: { cellListFrames: number; bruteForceFrames: number; pairDistances: number };
}

/** r_max and bin count for a cell: default half the smallest width, rounded down to whole bins. */
export function resolveBins(rMax: number | null, binWidth: number, limit: number): { nbins: number; rMax: number } {
  if (!(binWidth > 0)) throw new UsageError(`--bin-width must be positive, got ${binWidth}`);
  const want = rMax ?? limit;
  if (!(want > 0)) throw new UsageError(`--r-max must be positive, got ${want}`);
  if (want > limit * (1 + 1e-9)) {
    throw new UsageError(
      `--r-max ${want} A is beyond half the smallest perpendicular width of the cell (${limit.toFixed(4)} A), ` +
        `where the minimum-image distance stops being unique; use --r-max ${Math.floor(limit * 1000) / 1000}A or less`,
    );
  }
  const nbins = Math.floor(Math.min(want, limit) / binWidth + 1e-9);
  if (nbins < 1) throw new UsageError(`--bin-width ${binWidth} A is wider than r-max ${want} A`);
  return { nbins, rMax: nbins * binWidth };
}

/** Coarsen chunks to a larger chunk size (a power-of-two multiple), summing those that coincide. */
function coarsenChunks(chunks: RdfChunk[], from: number, to: number, nbins: number): RdfChunk[] {
  const factor = to / from;
  const out: RdfChunk[] = [];
  for (const c of chunks) {
    const key = Math.floor(c.key / factor);
    const last = out[out.length - 1];
    if (last && last.key === key) addChunk(last, c, nbins);
    else out.push(copyChunk(c, key, nbins));
  }
  return out;
}

function copyChunk(c: RdfChunk, key: number, nbins: number): RdfChunk {
  return { key, frames: c.frames, inverseVolume: c.inverseVolume, volume: c.volume, counts: c.counts.map((x) => Float64Array.from(x.subarray(0, nbins))) };
}

function addChunk(into: RdfChunk, c: RdfChunk, nbins: number): void {
  into.frames += c.frames;
  into.inverseVolume += c.inverseVolume;
  into.volume += c.volume;
  c.counts.forEach((x, p) => {
    const t = into.counts[p];
    for (let k = 0; k < nbins; k++) t[k] += x[k];
  });
}

/** Keep at most MAX_CHUNKS chunks by doubling the chunk size as often as needed. */
function capChunks(chunks: RdfChunk[], size: number, nbins: number): { chunks: RdfChunk[]; size: number } {
  while (chunks.length > MAX_CHUNKS) {
    chunks = coarsenChunks(chunks, size, size * 2, nbins);
    size *= 2;
  }
  return { chunks, size };
}

/** Re-lay per-frame coarse values from K columns to K' ≤ K columns. */
function truncateColumns(x: Float32Array, k: number, kNew: number): Float32Array {
  if (k === kNew) return x;
  const frames = k > 0 ? x.length / k : 0;
  const out = new Float32Array(frames * kNew);
  for (let f = 0; f < frames; f++) for (let j = 0; j < kNew; j++) out[f * kNew + j] = x[f * k + j];
  return out;
}

/** The g(r) pass for a set of pairs (see the module comment). */
export function rdfPass(spec: RdfSpec): Pass<RdfPartial, RdfResult> {
  for (const p of spec.pairs) {
    parseSelection(p.a);
    parseSelection(p.b);
  }
  return {
    name: 'rdf',
    create(ctx: PassContext) {
      if (!ctx.firstCell) {
        throw new UsageError('g(r) needs a periodic cell and this file has none: give it with --box a,b,c (Å) or a,b,c,alpha,beta,gamma');
      }
      const topo = ctx.topology;
      const first = new CellGeometry(ctx.firstCell);
      let { nbins } = resolveBins(spec.rMax, spec.binWidth, first.limit);
      const coarseStride = Math.max(1, Math.round(COARSE_STEP / spec.binWidth));
      let kCoarse = Math.floor(nbins / coarseStride);
      let molecule: Int32Array | null = null;
      if (spec.skipSameMolecule) {
        if (!topo.residues) throw new UsageError('--skip-same-molecule needs molecule (residue) information, which this file does not carry (use a PDB file with residues)');
        molecule = topo.residues.molecule;
      }
      const selected = spec.pairs.map((p) => [selectAtoms(p.a, topo), selectAtoms(p.b, topo)] as const);
      let hists = selected.map(([a, b]) => new PairHistogram(a, b, nbins, spec.binWidth, { molecule }));
      for (const [i, h] of hists.entries()) {
        if (h.orderedPairs <= 0) throw new UsageError(`pair ${spec.pairs[i].a}:${spec.pairs[i].b} has no distinct pairs of atoms to count`);
      }
      const frameHist = new Float64Array(nbins);
      let chunkSize = 1;
      let chunks: RdfChunk[] = [];
      let frames = 0;
      let capacity = 1024;
      let coarse = spec.pairs.map(() => new Float32Array(capacity * kCoarse));
      let geometry: CellGeometry = first;
      let geometryCell: Float64Array = Float64Array.from(ctx.firstCell);
      let pairsExamined = 0, cellFrames = 0, bruteFrames = 0;
      const geometryFor = (cell: CellMatrix): CellGeometry => {
        for (let k = 0; k < 9; k++) {
          if (cell[k] !== geometryCell[k]) {
            geometry = new CellGeometry(cell);
            geometryCell = Float64Array.from(cell);
            break;
          }
        }
        return geometry;
      };
      return {
        frame(f: Frame) {
          if (!f.cell) throw new UsageError(`frame ${f.index} has no periodic cell: give one with --box`);
          const g = geometryFor(f.cell);
          const rMax = nbins * spec.binWidth;
          if (rMax > g.limit * (1 + 1e-12)) {
            // The default r-max is the smallest half-width over the run: a smaller cell cuts the
            // bins of every frame to its own, which gives exactly the run with that r-max (bins
            // start at 0 with a fixed width; merge cuts partials the same way).
            const fewer = Math.floor(g.limit / spec.binWidth + 1e-9);
            if (spec.rMax !== null || fewer < 1) {
              throw new UsageError(
                `frame ${f.index + 1}: r-max ${rMax} A exceeds half the smallest perpendicular width of this frame's cell ` +
                  `(${g.limit.toFixed(4)} A; the cell shrinks during the run): give --r-max ${Math.floor(g.limit * 1000) / 1000}A or less`,
              );
            }
            const k = Math.floor(fewer / coarseStride);
            coarse = coarse.map((c) => {
              const cut = truncateColumns(c.subarray(0, frames * kCoarse), kCoarse, k);
              const out = new Float32Array(capacity * k);
              out.set(cut);
              return out;
            });
            kCoarse = k;
            nbins = fewer;
            const examined = hists.map((h) => h.pairsExamined);
            hists = selected.map(([a, b], i) => Object.assign(new PairHistogram(a, b, nbins, spec.binWidth, { molecule }), { pairsExamined: examined[i]! }));
          }
          const key = Math.floor(f.index / chunkSize);
          let chunk = chunks[chunks.length - 1];
          if (!chunk || chunk.key !== key) {
            chunk = { key, frames: 0, inverseVolume: 0, volume: 0, counts: spec.pairs.map(() => new Float64Array(nbins)) };
            chunks.push(chunk);
          }
          chunk.frames++;
          chunk.inverseVolume += 1 / g.volume;
          chunk.volume += g.volume;
          if (frames === capacity) {
            capacity *= 2;
            coarse = coarse.map((c) => {
              const bigger = new Float32Array(capacity * kCoarse);
              bigger.set(c);
              return bigger;
            });
          }
          hists.forEach((h, p) => {
            frameHist.fill(0);
            const before = h.pairsExamined;
            h.addFrame(f.positions, g, frameHist, { method: spec.method ?? 'auto' });
            pairsExamined += h.pairsExamined - before;
            if (h.lastMethod === 'cells') cellFrames++; else bruteFrames++;
            const counts = chunk!.counts[p];
            let cum = 0;
            const row = coarse[p];
            for (let k = 0; k < nbins; k++) {
              counts[k] += frameHist[k];
              cum += frameHist[k];
              if ((k + 1) % coarseStride === 0 && (k + 1) / coarseStride <= kCoarse) row[frames * kCoarse + (k + 1) / coarseStride - 1] = cum / h.nA;
            }
          });
          frames++;
          if (chunks.length > MAX_CHUNKS) ({ chunks, size: chunkSize } = capChunks(chunks, chunkSize, nbins));
        },
        partial(): RdfPartial {
          return {
            nbins,
            binWidth: spec.binWidth,
            coarseStride,
            chunkSize,
            chunks: chunks.map((c) => copyChunk(c, c.key, nbins)),
            frames,
            coarse: coarse.map((c) => c.slice(0, frames * kCoarse)),
            pairs: hists.map((h, i) => ({ a: spec.pairs[i].a, b: spec.pairs[i].b, nA: h.nA, nB: h.nB, orderedPairs: h.orderedPairs, same: h.same })),
            pairsExamined,
            cellFrames,
            bruteFrames,
          };
        },
      };
    },
    merge: mergeRdfPartials,
    finish(p: RdfPartial, ctx: PassContext): RdfResult {
      return finishRdf(p, spec, ctx);
    },
  };
}

/**
 * Combine the partials of two consecutive frame ranges (a before b): histograms and chunk sums
 * add, per-frame series concatenate; bins beyond the smaller r_max are dropped. Exact and
 * associative (chunks are aligned at multiples of their power-of-two size).
 */
export function mergeRdfPartials(a: RdfPartial, b: RdfPartial): RdfPartial {
  if (a.frames === 0) return b;
  if (b.frames === 0) return a;
  if (a.binWidth !== b.binWidth || a.coarseStride !== b.coarseStride || a.pairs.length !== b.pairs.length) {
    throw new AnalysisError('cannot merge g(r) partials made with different bin widths or pairs');
  }
  const nbins = Math.min(a.nbins, b.nbins);
  const size = Math.max(a.chunkSize, b.chunkSize);
  const ca = coarsenChunks(a.chunks, a.chunkSize, size, nbins);
  const cb = coarsenChunks(b.chunks, b.chunkSize, size, nbins);
  const joined = [...ca];
  for (const c of cb) {
    const last = joined[joined.length - 1];
    if (last && last.key === c.key) addChunk(last, c, nbins);
    else joined.push(c);
  }
  const capped = capChunks(joined, size, nbins);
  const ka = Math.floor(a.nbins / a.coarseStride), kb = Math.floor(b.nbins / b.coarseStride);
  const k = Math.min(ka, kb);
  const coarse = a.coarse.map((x, i) => {
    const xa = truncateColumns(x, ka, k), xb = truncateColumns(b.coarse[i], kb, k);
    const out = new Float32Array(xa.length + xb.length);
    out.set(xa);
    out.set(xb, xa.length);
    return out;
  });
  return {
    nbins,
    binWidth: a.binWidth,
    coarseStride: a.coarseStride,
    chunkSize: capped.size,
    chunks: capped.chunks,
    frames: a.frames + b.frames,
    coarse,
    pairs: a.pairs,
    pairsExamined: a.pairsExamined + b.pairsExamined,
    cellFrames: a.cellFrames + b.cellFrames,
    bruteFrames: a.bruteFrames + b.bruteFrames,
  };
}
