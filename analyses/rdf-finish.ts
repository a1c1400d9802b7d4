/**
 * Finishing the g(r) pass (analyses/rdf.ts): for each pair, the curve of all frames and of each
 * time block, the first shell, the block count (automatic from the statistical inefficiency or
 * as asked), the block standard errors, and the optional quantities computed from g(r) — S(q),
 * the Lennard-Jones energy and pressure, Kirkwood–Buff integrals (analyses/structure.ts). Rules
 * and formulas are stated in the module comment of analyses/rdf.ts.
 */
import type { PassContext, Quantity } from '../src/types.js';
import { quantity } from '../src/types.js';
import { estimateOf, noteReason, reason, type Estimate, type Reason } from '../src/estimate.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import { blockStatistics } from '../src/numerics/block-statistics.js';
import { inefficiency } from '../src/numerics/inefficiency.js';
import {
  structureFactor, structureFactorGrid, lennardJonesEnergy, lennardJonesPressure, kirkwoodBuffRunning, kirkwoodBuffFiniteVolume,
  kirkwoodBuffExtrapolation, KB_EXTRAPOLATION_FROM,
  type LennardJones, type SqWindow,
} from './structure.js';
import {
  automaticBlockCount, binCentres, findFirstShell, groupContiguous, normaliseCounts, runningCoordination, savitzkyGolay7,
  BLOCK_LENGTH_FACTOR, MAX_AUTO_BLOCKS, SMOOTHING,
  type ShellIndices,
} from './rdf-curves.js';
import type { RdfChunk, RdfPairResult, RdfPartial, RdfResult, RdfSpec } from './rdf.js';

/** Below this many blocks the uncertainty is flagged as rough. */
export const FEW_BLOCKS = 5;

/** g, density and running n of a set of chunks for one pair. */
interface Curve {
  counts: Float64Array;
  g: Float64Array;
  density: number;
  n: Float64Array;
  frames: number;
}

/** One pair of the partial, as the pass recorded it. */
type PairInfo = RdfPartial['pairs'][number];

/** g, density and running n of a set of chunks for pair p. */
function curveOf(chunks: RdfChunk[], p: number, nbins: number, binWidth: number, orderedPairs: number, nA: number): Curve {
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

/** Notes and reasons of one pair, one for one, and whether its numbers stand. */
interface PairNotes {
  notes: string[];
  reasons: Reason[];
  converged: boolean;
}

/**
 * Finish the g(r) pass: per pair the curve, shell, blocks and optional quantities
 * (`finishPair`); the rules are in the module comment of analyses/rdf.ts.
 */
export function finishRdf(p: RdfPartial, spec: RdfSpec, ctx: PassContext): RdfResult {
  if (p.frames === 0) throw new AnalysisError('no frames reached the g(r) analysis');
  const { nbins, binWidth } = p;
  const rMax = nbins * binWidth;
  const r = binCentres(nbins, binWidth);
  const pairs: RdfPairResult[] = p.pairs.map((pair, pi) => finishPair(p, spec, ctx, pair, pi, r));
  return {
    pairs,
    rMax: quantity(rMax, null, 'A'),
    binWidth: quantity(binWidth, null, 'A'),
    frames: p.frames,
    search: { cellListFrames: p.cellFrames, bruteForceFrames: p.bruteFrames, pairDistances: p.pairsExamined },
  };
}

/** The result of one pair: the curve of all frames, its first shell, block errors and the optional quantities. */
function finishPair(p: RdfPartial, spec: RdfSpec, ctx: PassContext, pair: PairInfo, pi: number, r: Float64Array): RdfPairResult {
  const { nbins, binWidth } = p;
  const rMax = nbins * binWidth;
  const pn: PairNotes = { notes: [], reasons: [], converged: true };
  const { notes, reasons } = pn;
  const total = curveOf(p.chunks, pi, nbins, binWidth, pair.orderedPairs, pair.nA);
  const gs = savitzkyGolay7(total.g);
  const shell = findFirstShell(gs, total.counts);
  if (shell.note) {
    noteReason(notes, reasons, reason(shell.peak === null ? 'rdf.no-first-peak' : 'rdf.no-first-minimum', shell.note, 'not-determined'));
    pn.converged = false;
  }
  const { blocksWanted, blockRule, ineff } = chooseBlocks(p, spec, pi, r, shell, pn);
  const perBlock = blockCurves(p, pair, pi, blocksWanted, pn);
  const B = perBlock.length;
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
    converged: pn.converged,
    notes,
    reasons,
  };
  if (spec.structureFactor) out.structureFactor = structureFactorPart(spec.structureFactor, total, perBlock, binWidth, rMax, pn);
  if (spec.lennardJones) out.lennardJones = lennardJonesPart(spec.lennardJones, spec.temperature ?? null, pair, total, perBlock, binWidth, rMax, pn);
  if (spec.kirkwoodBuff) out.kirkwoodBuff = kirkwoodBuffPart(total, perBlock, binWidth, nbins);
  for (const n of notes) ctx.warnings.push(`g(r) ${pair.a}:${pair.b}: ${n}`);
  return out;
}

/**
 * Block count of one pair: as asked (--blocks); else, with at least 20 frames, from the
 * statistical inefficiency of the per-frame count of B within the stored radius closest to the
 * first minimum (`automaticBlockCount`); else min(frames, 4) blocks, flagged as not defensible.
 */
function chooseBlocks(
  p: RdfPartial, spec: RdfSpec, pi: number, r: Float64Array, shell: ShellIndices, pn: PairNotes,
): { blocksWanted: number; blockRule: string; ineff: number | null } {
  const { nbins, binWidth } = p;
  const rMax = nbins * binWidth;
  const kCoarse = Math.floor(nbins / p.coarseStride);
  if (spec.blocks !== null) return { blocksWanted: spec.blocks, blockRule: `${spec.blocks} blocks as requested (--blocks)`, ineff: null };
  if (p.frames >= 20 && kCoarse > 0) {
    const rRef = shell.minimum !== null ? r[shell.minimum] : shell.peak !== null ? r[shell.peak] : rMax / 2;
    const col = Math.min(kCoarse - 1, Math.max(0, Math.round(rRef / (p.coarseStride * binWidth)) - 1));
    const series = new Float64Array(p.frames);
    const src = p.coarse[pi];
    for (let f = 0; f < p.frames; f++) series[f] = src[f * kCoarse + col];
    const ineff = inefficiency(series).g;
    const blocksWanted = automaticBlockCount(p.frames, ineff);
    const rCol = (col + 1) * p.coarseStride * binWidth;
    const blockRule =
      `blocks of at least ${BLOCK_LENGTH_FACTOR} statistical inefficiencies (${ineff.toFixed(1)} frames) of the per-frame ` +
      `count of B within ${rCol.toFixed(2)} A, at most ${MAX_AUTO_BLOCKS}`;
    if (Math.floor(p.frames / (BLOCK_LENGTH_FACTOR * ineff)) < FEW_BLOCKS) {
      noteReason(pn.notes, pn.reasons, reason(
        'rdf.few-independent-samples',
        `only ${Math.floor(p.frames / ineff)} independent samples (statistical inefficiency ${ineff.toFixed(1)} frames in ${p.frames} frames): the error bars are rough`,
      ));
    }
    return { blocksWanted, blockRule, ineff };
  }
  const blocksWanted = Math.min(p.frames, 4);
  const blockRule = `${blocksWanted} blocks: too few frames (${p.frames} < 20) to measure a correlation time; blocks assumed independent`;
  // Without a measurable correlation time the block errors cannot be defended (a crystal or
  // a frozen system gives a spurious ± 0): report the curve but not as converged.
  noteReason(pn.notes, pn.reasons, reason('rdf.too-few-frames', `only ${p.frames} frame(s): no correlation time can be measured, so the block error bars are not defensible`, 'unreliable'));
  pn.converged = false;
  return { blocksWanted, blockRule, ineff: null };
}

/** The curves of the time blocks: chunks grouped into contiguous blocks of nearly equal frame count (`groupContiguous`). */
function blockCurves(p: RdfPartial, pair: PairInfo, pi: number, blocksWanted: number, pn: PairNotes): Curve[] {
  const { nbins, binWidth } = p;
  const plan = groupContiguous(p.chunks.map((c) => c.frames), Math.max(1, Math.min(blocksWanted, p.chunks.length)));
  const blockChunks: RdfChunk[][] = Array.from({ length: plan.count }, () => []);
  p.chunks.forEach((c, m) => blockChunks[plan.group[m]].push(c));
  const perBlock = blockChunks.map((cs) => curveOf(cs, pi, nbins, binWidth, pair.orderedPairs, pair.nA));
  const B = perBlock.length;
  if (B < blocksWanted) noteReason(pn.notes, pn.reasons, reason('rdf.fewer-blocks', `${B} blocks instead of ${blocksWanted}: the frames are stored in ${p.chunks.length} contiguous chunks`));
  if (B < 2) {
    noteReason(pn.notes, pn.reasons, reason('rdf.single-block', 'a single block: no uncertainty can be given', 'unreliable'));
    pn.converged = false;
  }
  return perBlock;
}

/** S(q) from g(r) on the q grid above 2π/r_max (`structureFactor`), with block errors. */
function structureFactorPart(
  sf: { qMax: number; qStep: number; window: SqWindow }, total: Curve, perBlock: Curve[], binWidth: number, rMax: number, pn: PairNotes,
): NonNullable<RdfPairResult['structureFactor']> {
  const { qMax, qStep, window } = sf;
  const { q, qMin } = structureFactorGrid(qMax, qStep, rMax);
  const s = structureFactor(total.g, binWidth, total.density, q, window);
  const sBlocks = perBlock.map((b) => structureFactor(b.g, binWidth, b.density, q, window));
  const sqNote =
    `q starts at the first multiple of the q step at or above 2 pi/r-max = ${qMin.toPrecision(4)} 1/A: below it S(q) is set by the truncation of g(r) at r-max, ` +
    'not by the structure (Fourier resolution 2 pi/R); a larger r-max (bigger cell) reaches lower q';
  if (q.length === 0) noteReason(pn.notes, pn.reasons, reason('rdf.no-structure-factor-q', `S(q): no q in ${qStep}–${qMax} 1/A lies at or above 2 pi/r-max = ${qMin.toPrecision(4)} 1/A`));
  return {
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

/**
 * Lennard-Jones energy per particle and virial pressure from g(r) of a selection with itself
 * (`lennardJonesEnergy`, `lennardJonesPressure`), with block errors; null (and a note) for a
 * pair of two different selections.
 */
function lennardJonesPart(
  lj: LennardJones, T: number | null, pair: PairInfo, total: Curve, perBlock: Curve[], binWidth: number, rMax: number, pn: PairNotes,
): RdfPairResult['lennardJones'] {
  const cutoff = lj.cutoff ?? rMax;
  if (!pair.same) {
    noteReason(pn.notes, pn.reasons, reason('rdf.lj-needs-same-selection', '--lj applies to a selection paired with itself (A:A); skipped for this pair'));
    return null;
  }
  if (cutoff > rMax * (1 + 1e-9)) throw new UsageError(`--lj cutoff ${cutoff} A is beyond r-max ${rMax} A: g(r) is not known that far`);
  const params = { ...lj, cutoff };
  // Number density N_A⟨1/V⟩ of the species from the pair density (N_pairs/N_A)⟨1/V⟩.
  const toNumber = (pairDensity: number) => (pairDensity * pair.nA * pair.nA) / pair.orderedPairs;
  const numberDensity = toNumber(total.density);
  const e = lennardJonesEnergy(total.g, binWidth, total.density, params);
  const eBlocks = perBlock.map((b) => lennardJonesEnergy(b.g, binWidth, b.density, params).total);
  let pressure: Quantity | null = null;
  let pressureTail: Quantity | null = null;
  if (T !== null) {
    const pr = lennardJonesPressure(total.g, binWidth, total.density, numberDensity, T, params);
    const prBlocks = perBlock.map((b) => lennardJonesPressure(b.g, binWidth, b.density, toNumber(b.density), T, params).total);
    pressure = quantity(pr.total, seOrNull(prBlocks), 'Pa');
    pressureTail = quantity(pr.tail, null, 'Pa');
  }
  return {
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

/**
 * Kirkwood–Buff integrals from g(r): running G(R), the finite-volume G_V(L) and the
 * infinite-system value from L·G_V(L) = L·G∞ + F (Krüger, Schnell et al., J. Phys. Chem. Lett. 4,
 * 235 (2013); analyses/structure.ts), with block errors.
 */
function kirkwoodBuffPart(total: Curve, perBlock: Curve[], binWidth: number, nbins: number): NonNullable<RdfPairResult['kirkwoodBuff']> {
  const run = kirkwoodBuffRunning(total.g, binWidth);
  const fv = kirkwoodBuffFiniteVolume(total.g, binWidth);
  const fvBlocks = perBlock.map((b) => kirkwoodBuffFiniteVolume(b.g, binWidth));
  const last = nbins - 1;
  const ex = kirkwoodBuffExtrapolation(total.g, binWidth, KB_EXTRAPOLATION_FROM, fv);
  const exBlocks = perBlock.map((b, i) => kirkwoodBuffExtrapolation(b.g, binWidth, KB_EXTRAPOLATION_FROM, fvBlocks[i]).infinite);
  const blockError = seOrNull(exBlocks);
  const infUnc = blockError === null ? ex.fitError : Math.hypot(blockError, ex.fitError);
  return {
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
