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
 */
import type { Frame, Pass, PassContext, Quantity, CellMatrix } from '../src/types.js';
import { quantity } from '../src/types.js';
import { estimateOf, noteReason, reason, type Estimate, type Reason } from '../src/estimate.js';
import { CellGeometry } from '../src/cell.js';
import { PairHistogram, type SearchMethod } from '../src/neighbors.js';
import { parseSelection, selectAtoms } from '../src/selection.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import { blockStatistics } from '../src/numerics/block-statistics.js';
import { inefficiency } from '../src/numerics/inefficiency.js';
import {
  structureFactor, structureFactorGrid, lennardJonesEnergy, lennardJonesPressure, kirkwoodBuffRunning, kirkwoodBuffFiniteVolume,
  kirkwoodBuffExtrapolation, KB_EXTRAPOLATION_FROM,
  type LennardJones, type SqWindow,
} from './structure.js';

/** Most chunks kept per partial before neighbouring chunks are combined (memory bound). */
export const MAX_CHUNKS = 256;
/** Spacing (Å) of the radii at which per-frame cumulative counts are kept. */
export const COARSE_STEP = 0.25;
/** Each automatic block spans at least this many statistical inefficiencies. */
export const BLOCK_LENGTH_FACTOR = 4;
/** Upper limit of the automatic block count (SE of the SE is then 1/√(2·31) ≈ 13 %). */
export const MAX_AUTO_BLOCKS = 32;
/** Below this many blocks the uncertainty is flagged as rough. */
export const FEW_BLOCKS = 5;
/** Fewest pair counts in the first excursion above 1 for it to count as the first peak. */
export const MIN_PEAK_COUNTS = 25;
/** Name of the smoothing used to locate shells (reported in the results). */
export const SMOOTHING = 'Savitzky-Golay 7-point quadratic (Savitzky & Golay 1964); raw values in the 3 bins at each end';

// ---------------------------------------------------------------------------------------------
// Pure functions on histograms and curves.
// ---------------------------------------------------------------------------------------------

/** Ideal-gas volume of each spherical shell bin: V_k = (4π/3)(r_hi³ − r_lo³), r_lo = kΔr (Å³). */
export function shellVolumes(nbins: number, binWidth: number): Float64Array {
  const v = new Float64Array(nbins);
  for (let k = 0; k < nbins; k++) {
    const lo = k * binWidth, hi = (k + 1) * binWidth;
    v[k] = (4 * Math.PI / 3) * (hi * hi * hi - lo * lo * lo);
  }
  return v;
}

/** Bin centres r_k = (k + ½)Δr (Å). */
export function binCentres(nbins: number, binWidth: number): Float64Array {
  const r = new Float64Array(nbins);
  for (let k = 0; k < nbins; k++) r[k] = (k + 0.5) * binWidth;
  return r;
}

/**
 * g(r_k) = C_k / (N_pairs · V_k · Σ_f 1/V_f): observed ordered-pair counts over the ideal-gas
 * expectation summed frame by frame (normalisation in the module comment; common practice, e.g.
 * Allen & Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, §8.2).
 */
export function normaliseCounts(counts: ArrayLike<number>, binWidth: number, orderedPairs: number, inverseVolumeSum: number): Float64Array {
  const v = shellVolumes(counts.length, binWidth);
  const g = new Float64Array(counts.length);
  const norm = orderedPairs * inverseVolumeSum;
  for (let k = 0; k < counts.length; k++) g[k] = norm > 0 ? counts[k] / (norm * v[k]) : NaN;
  return g;
}

/**
 * Running coordination number at the bin centres, n(r_c,k) = 4πρ ∫_0^{r_c,k} g r² dr with g
 * constant in each bin: ρ [Σ_{m<k} g_m V_m + g_k (4π/3)(r_c,k³ − r_k³)] (definition of the
 * coordination number, e.g. Hansen & McDonald, Theory of Simple Liquids, 4th ed. 2013, §2.5).
 */
export function runningCoordination(g: ArrayLike<number>, binWidth: number, density: number): Float64Array {
  const n = new Float64Array(g.length);
  let acc = 0;
  for (let k = 0; k < g.length; k++) {
    const lo = k * binWidth, c = (k + 0.5) * binWidth, hi = (k + 1) * binWidth;
    const half = (4 * Math.PI / 3) * (c * c * c - lo * lo * lo);
    n[k] = density * (acc + g[k] * half);
    acc += g[k] * (4 * Math.PI / 3) * (hi * hi * hi - lo * lo * lo);
  }
  return n;
}

/** Coefficients of the 7-point quadratic/cubic Savitzky–Golay smoother (Savitzky & Golay 1964, Table I). */
export const SG7 = [-2, 3, 6, 7, 6, 3, -2].map((c) => c / 21);

/**
 * 7-point quadratic Savitzky–Golay smoothing y_s(k) = Σ_{j=−3}^{3} c_j y(k+j), c = (−2, 3, 6, 7,
 * 6, 3, −2)/21 (Savitzky & Golay 1964); exact for polynomials up to degree 3. The three points at
 * each end are returned unsmoothed.
 */
export function savitzkyGolay7(y: ArrayLike<number>): Float64Array {
  const n = y.length;
  const out = Float64Array.from(y as ArrayLike<number>);
  for (let k = 3; k < n - 3; k++) {
    let s = 0;
    for (let j = -3; j <= 3; j++) s += SG7[j + 3] * y[k + j];
    out[k] = s;
  }
  return out;
}

/** First shell of a g(r) curve: indices of the first peak and the first minimum (or null). */
export interface ShellIndices {
  peak: number | null;
  minimum: number | null;
  /** Why a feature is missing, when it is. */
  note: string | null;
}

/**
 * Locate the first peak and first minimum on a smoothed curve `gs` (rule in the module comment):
 * excursion = maximal run of bins with gs > 1; the first excursion holding ≥ minCounts raw
 * pair counts gives the peak (argmax of gs); the minimum is the argmin of gs from the end of
 * that excursion to the start of the next (middle of ties). If gs never falls below 1 after the
 * peak, the first local minimum (gs[k−1] > gs[k] ≤ gs[k+1]) is used. A minimum in the last three
 * bins (unsmoothed edge, g may still be falling) is not accepted. Common practice, no source.
 */
export function findFirstShell(gs: ArrayLike<number>, counts: ArrayLike<number>, minCounts = MIN_PEAK_COUNTS): ShellIndices {
  const n = gs.length;
  let k = 0;
  let peak: number | null = null;
  let end = n;
  while (k < n) {
    while (k < n && !(gs[k] > 1)) k++;
    if (k >= n) break;
    let e = k;
    let total = 0;
    let best = k;
    while (e < n && gs[e] > 1) {
      total += counts[e];
      if (gs[e] > gs[best]) best = e;
      e++;
    }
    if (total >= minCounts) {
      peak = best;
      end = e;
      break;
    }
    k = e;
  }
  if (peak === null) return { peak: null, minimum: null, note: `g(r) never rises above 1 with at least ${minCounts} pair counts within r-max` };
  let minimum: number | null = null;
  if (end < n) {
    let next = end;
    while (next < n && !(gs[next] > 1)) next++;
    let low = Infinity;
    for (let j = end; j < next; j++) if (gs[j] < low) low = gs[j];
    let first = -1, last = -1;
    for (let j = end; j < next; j++) {
      if (gs[j] === low) {
        if (first < 0) first = j;
        last = j;
      } else if (first >= 0) break;
    }
    minimum = Math.floor((first + last) / 2);
  } else {
    for (let j = peak + 1; j < n - 1; j++) {
      if (gs[j - 1] > gs[j] && gs[j] <= gs[j + 1]) {
        minimum = j;
        break;
      }
    }
  }
  if (minimum !== null && minimum >= n - 3) minimum = null;
  return {
    peak,
    minimum,
    note: minimum === null ? 'no first minimum inside r-max (g(r) still falling at r-max): the coordination number is not defined; raise --r-max or use a larger cell' : null,
  };
}

/**
 * Automatic block count: B = min(MAX_AUTO_BLOCKS, ⌊F / (BLOCK_LENGTH_FACTOR · s)⌋), at least 2,
 * s the statistical inefficiency in frames — blocks much longer than the correlation time give
 * nearly independent block means (Flyvbjerg & Petersen, J. Chem. Phys. 91, 461 (1989)).
 */
export function automaticBlockCount(frames: number, inefficiencyFrames: number): number {
  const b = Math.floor(frames / (BLOCK_LENGTH_FACTOR * Math.max(1, inefficiencyFrames)));
  return Math.max(2, Math.min(MAX_AUTO_BLOCKS, b));
}

/**
 * Group consecutive items with sizes w_m into at most `blocks` contiguous groups of nearly equal
 * total size: item m goes to group ⌊(Σ_{j<m} w_j + w_m/2)·B / W⌋; empty groups are dropped.
 * Returns the group index of every item and the number of groups.
 */
export function groupContiguous(sizes: ArrayLike<number>, blocks: number): { group: Int32Array; count: number } {
  const total = Array.from(sizes as ArrayLike<number>).reduce((a, b) => a + b, 0);
  const raw = new Int32Array(sizes.length);
  let before = 0;
  for (let m = 0; m < sizes.length; m++) {
    raw[m] = Math.min(blocks - 1, Math.floor(((before + sizes[m] / 2) * blocks) / total));
    before += sizes[m];
  }
  const group = new Int32Array(sizes.length);
  let count = 0;
  for (let m = 0; m < sizes.length; m++) {
    if (m > 0 && raw[m] !== raw[m - 1]) count++;
    group[m] = count;
  }
  return { group, count: sizes.length ? count + 1 : 0 };
}

// ---------------------------------------------------------------------------------------------
// The pass.
// ---------------------------------------------------------------------------------------------

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

/** g, density and running n of a set of chunks for pair p. */
function curveOf(chunks: RdfChunk[], p: number, nbins: number, binWidth: number, orderedPairs: number, nA: number) {
  const counts = new Float64Array(nbins);
  let inv = 0, frames = 0;
  for (const c of chunks) {
    const x = c.counts[p];
    for (let k = 0; k < nbins; k++) counts[k] += x[k];
    inv += c.inverseVolume;
    frames += c.frames;
  }
  const g = normaliseCounts(counts, binWidth, orderedPairs, inv);
  const density = (orderedPairs / nA) * (inv / frames);
  return { counts, g, density, n: runningCoordination(g, binWidth, density), frames };
}

function seOrNull(values: number[]): number | null {
  if (values.length < 2 || values.some((v) => !Number.isFinite(v))) return null;
  return blockStatistics(values).standardError;
}

function finishRdf(p: RdfPartial, spec: RdfSpec, ctx: PassContext): RdfResult {
  if (p.frames === 0) throw new AnalysisError('no frames reached the g(r) analysis');
  const { nbins, binWidth } = p;
  const rMax = nbins * binWidth;
  const r = binCentres(nbins, binWidth);
  const kCoarse = Math.floor(nbins / p.coarseStride);
  const pairs: RdfPairResult[] = p.pairs.map((pair, pi) => {
    const notes: string[] = [];
    const reasons: Reason[] = [];
    let converged = true;
    const total = curveOf(p.chunks, pi, nbins, binWidth, pair.orderedPairs, pair.nA);
    const gs = savitzkyGolay7(total.g);
    const shell = findFirstShell(gs, total.counts);
    if (shell.note) {
      noteReason(notes, reasons, reason(shell.peak === null ? 'rdf.no-first-peak' : 'rdf.no-first-minimum', shell.note, 'not-determined'));
      converged = false;
    }
    // Block count.
    let blocksWanted: number;
    let blockRule: string;
    let ineff: number | null = null;
    if (spec.blocks !== null) {
      blocksWanted = spec.blocks;
      blockRule = `${spec.blocks} blocks as requested (--blocks)`;
    } else if (p.frames >= 20 && kCoarse > 0) {
      const rRef = shell.minimum !== null ? r[shell.minimum] : shell.peak !== null ? r[shell.peak] : rMax / 2;
      const col = Math.min(kCoarse - 1, Math.max(0, Math.round(rRef / (p.coarseStride * binWidth)) - 1));
      const series = new Float64Array(p.frames);
      const src = p.coarse[pi];
      for (let f = 0; f < p.frames; f++) series[f] = src[f * kCoarse + col];
      ineff = inefficiency(series).g;
      blocksWanted = automaticBlockCount(p.frames, ineff);
      const rCol = (col + 1) * p.coarseStride * binWidth;
      blockRule =
        `blocks of at least ${BLOCK_LENGTH_FACTOR} statistical inefficiencies (${ineff.toFixed(1)} frames) of the per-frame ` +
        `count of B within ${rCol.toFixed(2)} A, at most ${MAX_AUTO_BLOCKS}`;
      if (Math.floor(p.frames / (BLOCK_LENGTH_FACTOR * ineff)) < FEW_BLOCKS) {
        noteReason(notes, reasons, reason(
          'rdf.few-independent-samples',
          `only ${Math.floor(p.frames / ineff)} independent samples (statistical inefficiency ${ineff.toFixed(1)} frames in ${p.frames} frames): the error bars are rough`,
        ));
      }
    } else {
      blocksWanted = Math.min(p.frames, 4);
      blockRule = `${blocksWanted} blocks: too few frames (${p.frames} < 20) to measure a correlation time; blocks assumed independent`;
      // Without a measurable correlation time the block errors cannot be defended (a crystal or
      // a frozen system gives a spurious ± 0): report the curve but not as converged.
      noteReason(notes, reasons, reason('rdf.too-few-frames', `only ${p.frames} frame(s): no correlation time can be measured, so the block error bars are not defensible`, 'unreliable'));
      converged = false;
    }
    const plan = groupContiguous(p.chunks.map((c) => c.frames), Math.max(1, Math.min(blocksWanted, p.chunks.length)));
    const blockChunks: RdfChunk[][] = Array.from({ length: plan.count }, () => []);
    p.chunks.forEach((c, m) => blockChunks[plan.group[m]].push(c));
    const perBlock = blockChunks.map((cs) => curveOf(cs, pi, nbins, binWidth, pair.orderedPairs, pair.nA));
    const B = perBlock.length;
    if (B < blocksWanted) noteReason(notes, reasons, reason('rdf.fewer-blocks', `${B} blocks instead of ${blocksWanted}: the frames are stored in ${p.chunks.length} contiguous chunks`));
    if (B < 2) {
      noteReason(notes, reasons, reason('rdf.single-block', 'a single block: no uncertainty can be given', 'unreliable'));
      converged = false;
    }
    const gError = Array.from(r, (_, k) => seOrNull(perBlock.map((b) => b.g[k])));
    let coordinationNumber: Estimate | null = null;
    if (shell.minimum !== null) {
      const m = shell.minimum;
      const window = { from: 0, to: r[m], unit: 'A' };
      coordinationNumber = estimateOf(quantity(total.n[m], seOrNull(perBlock.map((b) => b.n[m])), '1'), { window, reasons });
    }
    const out: RdfPairResult = {
      a: pair.a,
      b: pair.b,
      nA: pair.nA,
      nB: pair.nB,
      density: quantity(total.density, null, '1/A^3'),
      r: Array.from(r),
      g: Array.from(total.g),
      n: Array.from(total.n),
      gError,
      firstPeak: shell.peak !== null ? { r: r[shell.peak], g: gs[shell.peak] } : null,
      firstMinimum: shell.minimum !== null ? { r: r[shell.minimum], g: gs[shell.minimum] } : null,
      coordinationNumber,
      blocks: B,
      blockRule,
      statisticalInefficiency: ineff,
      smoothing: SMOOTHING,
      converged,
      notes,
      reasons,
    };
    if (spec.structureFactor) {
      const { qMax, qStep, window } = spec.structureFactor;
      const { q, qMin } = structureFactorGrid(qMax, qStep, rMax);
      const s = structureFactor(total.g, binWidth, total.density, q, window);
      const sBlocks = perBlock.map((b) => structureFactor(b.g, binWidth, b.density, q, window));
      const sqNote =
        `q starts at the first multiple of the q step at or above 2 pi/r-max = ${qMin.toPrecision(4)} 1/A: below it S(q) is set by the truncation of g(r) at r-max, ` +
        'not by the structure (Fourier resolution 2 pi/R); a larger r-max (bigger cell) reaches lower q';
      if (q.length === 0) noteReason(notes, reasons, reason('rdf.no-structure-factor-q', `S(q): no q in ${qStep}–${qMax} 1/A lies at or above 2 pi/r-max = ${qMin.toPrecision(4)} 1/A`));
      out.structureFactor = {
        qMin: quantity(qMin, null, '1/A'),
        note: sqNote,
        q: Array.from(q),
        s: Array.from(s),
        sError: Array.from(q, (_, i) => seOrNull(sBlocks.map((x) => x[i]))),
        window: window === 'lorch'
          ? 'Lorch (J. Phys. C 2, 229 (1969)) W(r) = sin(pi r/R)/(pi r/R), R = r-max: damps truncation ripples at the cost of broader peaks'
          : 'none: the sharp cut at r-max adds ripples of period 2 pi/r-max around every feature',
        density: quantity(total.density, null, '1/A^3'),
      };
    }
    if (spec.lennardJones) {
      const lj = spec.lennardJones;
      const cutoff = lj.cutoff ?? rMax;
      if (!pair.same) {
        out.lennardJones = null;
        noteReason(notes, reasons, reason('rdf.lj-needs-same-selection', '--lj applies to a selection paired with itself (A:A); skipped for this pair'));
      } else if (cutoff > rMax * (1 + 1e-9)) {
        throw new UsageError(`--lj cutoff ${cutoff} A is beyond r-max ${rMax} A: g(r) is not known that far`);
      } else {
        const params = { ...lj, cutoff };
        // Number density N_A⟨1/V⟩ of the species from the pair density (N_pairs/N_A)⟨1/V⟩.
        const toNumber = (pairDensity: number) => (pairDensity * pair.nA * pair.nA) / pair.orderedPairs;
        const numberDensity = toNumber(total.density);
        const e = lennardJonesEnergy(total.g, binWidth, total.density, params);
        const eBlocks = perBlock.map((b) => lennardJonesEnergy(b.g, binWidth, b.density, params).total);
        const T = spec.temperature ?? null;
        let pressure: Quantity | null = null;
        let pressureTail: Quantity | null = null;
        if (T !== null) {
          const pr = lennardJonesPressure(total.g, binWidth, total.density, numberDensity, T, params);
          const prBlocks = perBlock.map((b) => lennardJonesPressure(b.g, binWidth, b.density, toNumber(b.density), T, params).total);
          pressure = quantity(pr.total, seOrNull(prBlocks), 'Pa');
          pressureTail = quantity(pr.tail, null, 'Pa');
        }
        out.lennardJones = {
          epsilon: quantity(lj.epsilon, null, 'kJ/mol'),
          sigma: quantity(lj.sigma, null, 'A'),
          cutoff: quantity(cutoff, null, 'A'),
          energy: quantity(e.total, seOrNull(eBlocks), 'kJ/mol'),
          energyTail: quantity(e.tail, null, 'kJ/mol'),
          pressure,
          pressureTail,
          note:
            'energy per particle U/N = 2 pi rho int_0^rc u g r^2 dr and virial pressure P = rho kB T - (2 pi/3) rho^2 int_0^rc r^3 u\' g dr, ' +
            'each plus the standard long-range tail for a truncated (unshifted) 12-6 potential with g = 1 beyond rc (Allen & Tildesley 2017, §2.8)' +
            (T === null ? '; pressure needs --temperature' : ''),
        };
      }
    }
    if (spec.kirkwoodBuff) {
      const run = kirkwoodBuffRunning(total.g, binWidth);
      const fv = kirkwoodBuffFiniteVolume(total.g, binWidth);
      const fvBlocks = perBlock.map((b) => kirkwoodBuffFiniteVolume(b.g, binWidth));
      const last = nbins - 1;
      const ex = kirkwoodBuffExtrapolation(total.g, binWidth, KB_EXTRAPOLATION_FROM, fv);
      const exBlocks = perBlock.map((b, i) => kirkwoodBuffExtrapolation(b.g, binWidth, KB_EXTRAPOLATION_FROM, fvBlocks[i]).infinite);
      const blockError = seOrNull(exBlocks);
      const infUnc = blockError === null ? ex.fitError : Math.hypot(blockError, ex.fitError);
      out.kirkwoodBuff = {
        r: Array.from({ length: nbins }, (_, k) => (k + 1) * binWidth),
        running: Array.from(run),
        finiteVolume: Array.from(fv),
        runningAtRMax: quantity(run[last], seOrNull(perBlock.map((b) => kirkwoodBuffRunning(b.g, binWidth)[last])), 'A^3'),
        finiteVolumeAtRMax: quantity(fv[last], seOrNull(fvBlocks.map((b) => b[last])), 'A^3'),
        infinite: quantity(ex.infinite, infUnc, 'A^3'),
        extrapolation: {
          from: quantity(ex.from, null, 'A'),
          to: quantity(ex.to, null, 'A'),
          points: ex.points,
          surfaceTerm: quantity(ex.surface, null, 'A^4'),
          fitError: quantity(ex.fitError, null, 'A^3'),
          blockError: blockError === null ? null : quantity(blockError, null, 'A^3'),
        },
        method:
          'running G(R) = 4 pi int_0^R (g-1) r^2 dr; the finite-volume integral of Kruger, Schnell et al. (J. Phys. Chem. Lett. 4, 235 (2013)) ' +
          'G_V(L) = 4 pi int_0^L (g-1) r^2 (1 - 3x/2 + x^3/2) dr, x = r/L, L the diameter of the spherical subvolume, both at the upper bin edges; ' +
          `and the infinite-system G from their 1/L scaling, L G_V(L) = L G_inf + F, fitted as a straight line over L = ${ex.from.toPrecision(4)}–${ex.to.toPrecision(4)} A ` +
          `(the upper ${Math.round(100 * (1 - KB_EXTRAPOLATION_FROM))} % of r-max); uncertainty = block standard error of the extrapolated value combined with the ` +
          'least-squares slope error (departure from a line). g(r) is not corrected for the finite number of particles in the cell',
      };
    }
    for (const n of notes) ctx.warnings.push(`g(r) ${pair.a}:${pair.b}: ${n}`);
    return out;
  });
  return {
    pairs,
    rMax: quantity(rMax, null, 'A'),
    binWidth: quantity(binWidth, null, 'A'),
    frames: p.frames,
    search: { cellListFrames: p.cellFrames, bruteForceFrames: p.bruteFrames, pairDistances: p.pairsExamined },
  };
}
