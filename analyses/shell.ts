/**
 * Solvation shell of selected centre atoms: distribution of the number of neighbours within a
 * cutoff, its mean with a correlation-aware standard error, the survival correlation of shell
 * membership and the residence time.
 *
 * Membership storage: for every (centre, neighbour) pair that is ever inside the cutoff the pass
 * keeps the runs of consecutive frames it spends inside, as [first, last] frame indices (run-
 * length encoding; two numbers per visit, ≈16 bytes, plus ≈100 bytes per tracked pair), and per
 * frame the total number of members (Int32) and the frame index (Int32): 8 bytes per frame.
 * A per-frame bitset over all centre–neighbour pairs would cost N_c·N_n/8 bytes per frame
 * (e.g. 10 Li × 1000 O: 1.25 kB per frame); the runs cost only what the exchanges cost.
 *
 * Survival (Impey, Madden & McDonald, J. Phys. Chem. 87, 5071 (1983)): P_ij(t, t0) = 1 when j is
 * in the shell of i at t0 and at t0 + t and never absent for longer than the tolerance t* in
 * between; an absence of g consecutive frames lasts g·Δt and is forgiven when g·Δt ≤ t*.
 *   C(t) = Σ_{t0} Σ_ij P_ij(t, t0) / Σ_{t0} Σ_ij P_ij(0, t0),
 * both sums over the origins t0 ≤ T−1−t (so C(0) = 1), lags up to half the run.
 *
 * Residence time: least-squares line through ln C(t) (free intercept) over the lags from
 * max(1, t* / Δt) to the last lag before C first falls below FIT_FLOOR, i.e. C ≈ A·exp(−t/τ) and
 * τ = −1/slope. Its uncertainty: the run is cut into M contiguous segments (src/fit.ts
 * planSegments, the rule shared with the transport coefficients), C is computed inside each
 * segment alone (origins and ends inside it), τ fitted over the same window in each, and the
 * standard error is SD/√M.
 */
import type { Frame, Pass, PassContext, Quantity } from '../src/types.js';
import { quantity } from '../src/types.js';
import { estimateOf, noteReason, reason, type Estimate, type Reason } from '../src/estimate.js';
import { CellGeometry } from '../src/cell.js';
import { forEachPairWithin } from '../src/neighbors.js';
import { parseSelection, selectAtoms } from '../src/selection.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import { planSegments, MIN_WINDOW_POINTS, type LagWindow } from '../src/fit.js';
import { blockStatistics } from '../src/numerics/block-statistics.js';
import { fitExponentialDecay } from '../src/numerics/exponential-fits.js';
import { laggedProductSums } from '../src/correlate.js';
import { inefficiency } from '../src/numerics/inefficiency.js';
import { defineAnalysis } from '../src/engine/analysis.js';
import { SHARED, type OptionValues } from '../src/engine/options.js';
import { formatQuantity, formatSig, formatTable, toCsv } from '../src/output.js';
import { CAUTION } from '../src/caution.js';

/** The fit window ends before the survival function first drops below this value (≈ 3τ). */
export const FIT_FLOOR = 0.05;
/** Default number of segments for the residence-time uncertainty. */
export const DEFAULT_SHELL_SEGMENTS = 5;

/** A run of shell membership: contiguous frames (ordinals) first..last inclusive. */
export type Run = [number, number];

/** Runs bridged by the tolerance: one continuous residence with its actual presence runs. */
export interface Residence {
  start: number;
  end: number;
  runs: Run[];
}

/**
 * Join presence runs (sorted, frame ordinals) whose gaps are short enough: runs separated by
 * g absent frames are one residence when g ≤ maxGap (g = ⌊t* / Δt⌋ from the IMM tolerance,
 * Impey, Madden & McDonald 1983).
 */
export function bridgeRuns(runs: readonly Run[], maxGap: number): Residence[] {
  const out: Residence[] = [];
  for (const r of runs) {
    const last = out[out.length - 1];
    if (last && r[0] - last.end - 1 <= maxGap) {
      last.end = r[1];
      last.runs.push([r[0], r[1]]);
    } else out.push({ start: r[0], end: r[1], runs: [[r[0], r[1]]] });
  }
  return out;
}

/**
 * Raw lagged presence sums of one residence clipped to the frames [lo, hi]:
 *   R(t) = Σ_{t0} p(t0)·p(t0 + t), t0 and t0 + t in [max(start, lo), min(end, hi)], t = 0 … maxLag,
 * added into `out`. A residence without gaps gives R(t) = max(0, ℓ − t) (ℓ its clipped length);
 * otherwise the sums come from the FFT correlation theorem (src/correlate.ts), or directly for
 * short residences.
 */
export function addResidenceLagSums(res: Residence, lo: number, hi: number, maxLag: number, out: Float64Array): void {
  const a = Math.max(res.start, lo), b = Math.min(res.end, hi);
  if (b < a) return;
  const len = b - a + 1;
  const top = Math.min(maxLag, len - 1);
  const clipped: Run[] = [];
  for (const [s, e] of res.runs) {
    const s2 = Math.max(s, a), e2 = Math.min(e, b);
    if (e2 >= s2) clipped.push([s2, e2]);
  }
  if (clipped.length === 0) return;
  if (clipped.length === 1 && clipped[0][0] === a && clipped[0][1] === b) {
    for (let t = 0; t <= top; t++) out[t] += len - t;
    return;
  }
  const p = new Float64Array(len);
  for (const [s, e] of clipped) for (let k = s; k <= e; k++) p[k - a] = 1;
  if (len <= 256) {
    for (let i = 0; i < len; i++) {
      if (p[i] === 0) continue;
      const jEnd = Math.min(len - 1, i + top);
      for (let j = i; j <= jEnd; j++) out[j - i] += p[j];
    }
    return;
  }
  const sums = laggedProductSums([[p, p]], [0], top)[0];
  // FFT sums of 0/1 products are integers up to round-off: round them.
  for (let t = 0; t <= top; t++) out[t] += Math.round(sums[t]);
}

/**
 * Survival function C(t) = num(t)/den(t), with num(t) = Σ over residences of the lagged presence
 * sums and den(t) = Σ_{t0=lo}^{hi−t} m(t0), m the number of members present at frame t0
 * (Impey, Madden & McDonald 1983; origins restricted to [lo, hi − t]). NaN where den = 0.
 */
export function survivalFunction(
  residences: readonly Residence[], members: ArrayLike<number>, lo: number, hi: number, maxLag: number,
): Float64Array {
  const num = new Float64Array(maxLag + 1);
  for (const r of residences) addResidenceLagSums(r, lo, hi, maxLag, num);
  const prefix = new Float64Array(hi - lo + 2);
  for (let t = lo; t <= hi; t++) prefix[t - lo + 1] = prefix[t - lo] + members[t];
  const c = new Float64Array(maxLag + 1);
  for (let t = 0; t <= maxLag; t++) {
    const last = hi - t;
    const den = last >= lo ? prefix[last - lo + 1] : 0;
    c[t] = den > 0 ? num[t] / den : NaN;
  }
  return c;
}

/** Fit window on a survival curve: lags [max(1, ⌈t* / Δt⌉), last lag before C < floor]. */
export function survivalWindow(c: ArrayLike<number>, toleranceFrames: number, floor = FIT_FLOOR): LagWindow & { decayed: boolean } {
  const from = Math.max(1, toleranceFrames);
  let to = c.length - 1;
  let decayed = false;
  for (let t = from; t < c.length; t++) {
    if (!(c[t] >= floor)) {
      to = t - 1;
      decayed = true;
      break;
    }
  }
  return { from, to, decayed };
}

/** Configuration of the shell pass. */
export interface ShellSpec {
  center: string;
  around: string;
  cutoff: number;
  /** IMM tolerance t* (ps). */
  tolerance: number;
  /** Segments for the τ uncertainty (default DEFAULT_SHELL_SEGMENTS). */
  segments?: number;
  /** Optional user fit window in ps. */
  fitFrom?: number | null;
  fitTo?: number | null;
}

/** Accumulated state of a frame range. */
export interface ShellPartial {
  centres: number;
  aroundAtoms: number;
  frames: number;
  /** Frame index of every frame. */
  frameIndex: Int32Array;
  /** Members (centre–neighbour pairs inside the cutoff) per frame. */
  members: Int32Array;
  /** histogram[n] = number of (centre, frame) with n neighbours. */
  histogram: number[];
  /** key = centre position · aroundAtoms + neighbour position → flat [first, last, first, last, …] frame indices. */
  runs: Map<number, number[]>;
}

/** Result of the shell analysis. */
export interface ShellResult {
  center: string;
  around: string;
  centres: number;
  aroundAtoms: number;
  frames: number;
  cutoff: Quantity;
  counts: { values: number[]; fractions: number[] };
  /** Mean neighbour count over the run; its verdict is the analysis' (`converged`), its reasons all the notes. */
  meanCount: Estimate;
  statisticalInefficiency: number | null;
  survival: { time: number[]; value: number[] };
  tolerance: Quantity;
  /** τ with its fit window (ps); verdict and reasons as for `meanCount`. */
  residenceTime: Estimate | null;
  fitWindow: { from: number; to: number; unit: 'ps' } | null;
  fitMethod: string;
  segments: number;
  converged: boolean;
  notes: string[];
  /** The notes, coded (src/estimate.ts), one for one. */
  reasons: Reason[];
}

/** Frame-by-frame membership in the shell of every centre (see the module comment). */
export function shellPass(spec: ShellSpec): Pass<ShellPartial, ShellResult> {
  parseSelection(spec.center);
  parseSelection(spec.around);
  if (!(spec.cutoff > 0)) throw new UsageError(`--cutoff must be positive, got ${spec.cutoff}`);
  if (!(spec.tolerance >= 0)) throw new UsageError(`--tolerance must not be negative, got ${spec.tolerance}`);
  return {
    name: 'shell',
    needsEvenSpacing: true,
    create(ctx: PassContext) {
      if (!ctx.firstCell) throw new UsageError('the shell analysis needs a periodic cell and this file has none: give it with --box');
      const centres = selectAtoms(spec.center, ctx.topology);
      const around = selectAtoms(spec.around, ctx.topology);
      const nA = around.length;
      let frameIndex = new Int32Array(1024);
      let members = new Int32Array(1024);
      const histogram: number[] = [];
      const runs = new Map<number, number[]>();
      const perCentre = new Int32Array(centres.length);
      let frames = 0;
      let prevIndex = -2;
      let geometry: CellGeometry | null = null;
      let geometryCell: Float64Array | null = null;
      return {
        frame(f: Frame) {
          if (!f.cell) throw new UsageError(`frame ${f.index} has no periodic cell: give one with --box`);
          if (!geometryCell || f.cell.some((v, k) => v !== geometryCell![k])) {
            geometry = new CellGeometry(f.cell);
            geometryCell = Float64Array.from(f.cell);
          }
          const g = geometry!;
          if (spec.cutoff > g.limit) {
            throw new UsageError(`--cutoff ${spec.cutoff} A exceeds half the smallest perpendicular width of frame ${f.index}'s cell (${g.limit.toFixed(4)} A)`);
          }
          if (frames === frameIndex.length) {
            const fi = new Int32Array(2 * frames); fi.set(frameIndex); frameIndex = fi;
            const mm = new Int32Array(2 * frames); mm.set(members); members = mm;
          }
          perCentre.fill(0);
          let total = 0;
          forEachPairWithin(f.positions, g, centres, around, spec.cutoff, (p, q) => {
            perCentre[p]++;
            total++;
            const key = p * nA + q;
            const list = runs.get(key);
            if (list && list[list.length - 1] === prevIndex) list[list.length - 1] = f.index;
            else if (list) list.push(f.index, f.index);
            else runs.set(key, [f.index, f.index]);
          });
          for (let p = 0; p < centres.length; p++) histogram[perCentre[p]] = (histogram[perCentre[p]] ?? 0) + 1;
          frameIndex[frames] = f.index;
          members[frames] = total;
          frames++;
          prevIndex = f.index;
        },
        partial(): ShellPartial {
          const hist = Array.from(histogram, (v) => v ?? 0);
          return {
            centres: centres.length,
            aroundAtoms: nA,
            frames,
            frameIndex: frameIndex.slice(0, frames),
            members: members.slice(0, frames),
            histogram: hist,
            runs: new Map([...runs].map(([k, v]) => [k, v.slice()])),
          };
        },
      };
    },
    merge: mergeShellPartials,
    finish: (p, ctx) => finishShell(p, spec, ctx),
  };
}

/**
 * Combine the partials of consecutive frame ranges (a before b): per-frame arrays concatenate,
 * histograms add, and a run that ends on a's last frame joins the run of the same pair that
 * starts on b's first frame. Exact.
 */
export function mergeShellPartials(a: ShellPartial, b: ShellPartial): ShellPartial {
  if (a.frames === 0) return b;
  if (b.frames === 0) return a;
  const cat = (x: Int32Array, y: Int32Array) => {
    const o = new Int32Array(x.length + y.length);
    o.set(x);
    o.set(y, x.length);
    return o;
  };
  const lastA = a.frameIndex[a.frames - 1], firstB = b.frameIndex[0];
  const runs = new Map<number, number[]>();
  for (const [k, v] of a.runs) runs.set(k, v.slice());
  for (const [k, v] of b.runs) {
    const list = runs.get(k);
    if (!list) {
      runs.set(k, v.slice());
      continue;
    }
    let start = 0;
    if (list[list.length - 1] === lastA && v[0] === firstB) {
      list[list.length - 1] = v[1];
      start = 2;
    }
    for (let i = start; i < v.length; i++) list.push(v[i]);
  }
  const n = Math.max(a.histogram.length, b.histogram.length);
  const histogram = Array.from({ length: n }, (_, i) => (a.histogram[i] ?? 0) + (b.histogram[i] ?? 0));
  return {
    centres: a.centres,
    aroundAtoms: a.aroundAtoms,
    frames: a.frames + b.frames,
    frameIndex: cat(a.frameIndex, b.frameIndex),
    members: cat(a.members, b.members),
    histogram,
    runs,
  };
}

function finishShell(p: ShellPartial, spec: ShellSpec, ctx: PassContext): ShellResult {
  const notes: string[] = [];
  const reasons: Reason[] = [];
  const note = (code: string, text: string, verdict: Reason['verdict'] = 'ok') => noteReason(notes, reasons, reason(code, text, verdict));
  let converged = true;
  const F = p.frames;
  if (F === 0) throw new AnalysisError('no frames reached the shell analysis');
  const dt = ctx.frameInterval;
  if (dt === null) {
    throw new UsageError('the shell survival needs the time between frames, and the file carries no times: give --frame-interval (e.g. 0.1ps)');
  }
  // Count distribution and mean.
  const totalCounts = p.histogram.reduce((s, v) => s + v, 0);
  const fractions = p.histogram.map((v) => v / totalCounts);
  const series = Float64Array.from(p.members, (m) => m / p.centres);
  let meanCount: Quantity;
  let ineff: number | null = null;
  const mean = series.reduce((s, v) => s + v, 0) / F;
  if (F >= 20) {
    ineff = inefficiency(series).g;
    let ss = 0;
    for (const v of series) ss += (v - mean) ** 2;
    const sd = Math.sqrt(ss / (F - 1));
    meanCount = quantity(mean, sd * Math.sqrt(ineff / F), '1');
    if (F / ineff < 20) note('shell.few-independent-samples', `the mean count rests on only ${(F / ineff).toFixed(1)} independent samples`);
  } else {
    meanCount = quantity(mean, null, '1');
    note('shell.too-few-frames-for-mean', `only ${F} frames: no standard error for the mean count (need at least 20)`, 'unreliable');
    converged = false;
  }
  // Runs in frame ordinals.
  const ordinal = new Map<number, number>();
  p.frameIndex.forEach((idx, o) => ordinal.set(idx, o));
  const tolFrames = Math.floor(spec.tolerance / dt + 1e-9);
  const residences: Residence[] = [];
  for (const list of p.runs.values()) {
    const rr: Run[] = [];
    for (let i = 0; i < list.length; i += 2) rr.push([ordinal.get(list[i])!, ordinal.get(list[i + 1])!]);
    residences.push(...bridgeRuns(rr, tolFrames));
  }
  const maxLag = Math.floor((F - 1) / 2);
  const time = Float64Array.from({ length: maxLag + 1 }, (_, k) => k * dt);
  const c = maxLag >= 0 ? survivalFunction(residences, p.members, 0, F - 1, maxLag) : new Float64Array(0);
  const fitMethod =
    `least-squares line through ln C(t) (free intercept), C(t) ~ A exp(-t/tau); window from max(dt, t*) to the last lag before C < ${FIT_FLOOR}; ` +
    `uncertainty SD/sqrt(M) over M contiguous segments fitted on the same window`;
  let residenceTime: Quantity | null = null;
  // (Its Estimate is made at the end, with every reason.)
  let fitWindow: ShellResult['fitWindow'] = null;
  let segments = 0;
  if (totalCounts === 0 || p.members.every((m) => m === 0)) {
    note('shell.never-occupied', 'no neighbour was ever inside the cutoff: no survival function', 'not-determined');
    converged = false;
  } else if (maxLag < 3) {
    note('shell.too-few-frames', `only ${F} frames: too few for a survival function`, 'not-determined');
    converged = false;
  } else {
    let win: LagWindow;
    let auto = true;
    if (spec.fitFrom != null || spec.fitTo != null) {
      auto = false;
      const from = Math.max(1, Math.ceil((spec.fitFrom ?? dt) / dt - 1e-9));
      const to = Math.floor((spec.fitTo ?? maxLag * dt) / dt + 1e-9);
      if (to > maxLag) throw new UsageError(`--fit-to is beyond the longest lag computed (${(maxLag * dt).toFixed(4)} ps, half the run)`);
      if (to - from + 1 < 3) throw new UsageError('the fit window holds fewer than 3 lags');
      win = { from, to };
    } else {
      const w = survivalWindow(c, tolFrames);
      win = { from: w.from, to: w.to };
      if (!w.decayed) {
        note('shell.not-decayed', `C(t) stays above ${FIT_FLOOR} up to half the run (${(maxLag * dt).toFixed(3)} ps): the decay is not resolved and any tau would be an extrapolation`, 'not-converged');
        converged = false;
        if (c[maxLag] > Math.exp(-1)) note('shell.far-from-decayed', 'C(t) has not even decayed to 1/e: run much longer');
      }
    }
    const points = win.to - win.from + 1;
    if (points < MIN_WINDOW_POINTS) {
      note('shell.window-too-short', `the fit window holds only ${Math.max(0, points)} lags (need ${MIN_WINDOW_POINTS}): the decay is faster than the frame interval allows to resolve`, 'not-converged');
      converged = false;
    }
    const tau = points >= 3 ? fitExponentialDecay(time, c, win.from, win.to) : NaN;
    if (!Number.isFinite(tau)) {
      note('shell.no-fit', 'no exponential decay could be fitted in the window', 'not-determined');
      converged = false;
    } else {
      const plan = planSegments(F, win, { segments: spec.segments ?? DEFAULT_SHELL_SEGMENTS, mayShrink: auto, minPoints: 3 });
      for (const r of plan.reasons) noteReason(notes, reasons, r);
      let se: number | null = null;
      if (plan.ok) {
        segments = plan.segments;
        const taus: number[] = [];
        for (let s = 0; s < plan.segments; s++) {
          const lo = s * plan.segmentFrames, hi = lo + plan.segmentFrames - 1;
          const cs = survivalFunction(residences, p.members, lo, hi, plan.window.to);
          taus.push(fitExponentialDecay(time, cs, plan.window.from, plan.window.to));
        }
        if (taus.every(Number.isFinite)) se = blockStatistics(taus).standardError;
        else note('shell.segment-fit-failed', 'the survival function of a segment could not be fitted in the window: no uncertainty', 'unreliable');
        if (plan.segmentFrames * dt < 5 * tau) note('shell.short-segments', `segments (${(plan.segmentFrames * dt).toFixed(3)} ps) are shorter than 5 tau: the uncertainty is rough`);
      }
      if (se === null) converged = false;
      residenceTime = quantity(tau, se, 'ps');
      fitWindow = { from: win.from * dt, to: win.to * dt, unit: 'ps' };
    }
  }
  for (const n of notes) ctx.warnings.push(`shell ${spec.center} / ${spec.around}: ${n}`);
  // Both numbers carry the analysis' verdict (as the report has always shown them).
  const verdict = converged ? 'ok' : 'not-converged';
  return {
    center: spec.center,
    around: spec.around,
    centres: p.centres,
    aroundAtoms: p.aroundAtoms,
    frames: F,
    cutoff: quantity(spec.cutoff, null, 'A'),
    counts: { values: p.histogram.map((_, i) => i), fractions },
    meanCount: estimateOf(meanCount, { window: { from: 0, to: (F - 1) * dt, unit: 'ps' }, verdict, reasons }),
    statisticalInefficiency: ineff,
    survival: { time: Array.from(time), value: Array.from(c) },
    tolerance: quantity(spec.tolerance, null, 'ps'),
    residenceTime: residenceTime === null ? null : estimateOf(residenceTime, { window: fitWindow, verdict, reasons }),
    fitWindow,
    fitMethod,
    segments,
    converged,
    notes,
    reasons,
  };
}

/** Human-readable text of a shell result. */
export function renderShell(file: string, r: ShellResult): string {
  const dist = r.counts.values
    .map((v, i) => [v, r.counts.fractions[i]!] as const)
    .filter(([, f]) => f > 0)
    .map(([v, f]) => `${v}: ${(100 * f).toFixed(1)}%`)
    .join(', ');
  const rows: string[][] = [
    ['centres', `${r.center} (${r.centres} atoms)`],
    ['neighbours', `${r.around} (${r.aroundAtoms} atoms)`],
    ['cutoff', `${formatSig(r.cutoff.value, 4)} Å`],
    ['frames', String(r.frames)],
    ['neighbour count distribution', dist || '—'],
    ['mean count (± SE)', `${formatQuantity(r.meanCount)}${r.statisticalInefficiency !== null ? ` (statistical inefficiency ${formatSig(r.statisticalInefficiency, 3)} frames)` : ''}`],
    ['tolerance t*', `${formatSig(r.tolerance.value, 4)} ps`],
    ['residence time (± SE)', r.residenceTime ? formatQuantity(r.residenceTime) : 'not determined'],
    ['fit window', r.fitWindow ? `${formatSig(r.fitWindow.from, 4)}–${formatSig(r.fitWindow.to, 4)} ps` : '—'],
    ['segments for the SE', r.segments ? String(r.segments) : '—'],
  ];
  const out = [file, formatTable(['property', 'value'], rows), `Residence time: ${r.fitMethod}.`];
  if (!r.converged) out.push(`Not converged: ${r.notes.join('; ')}`);
  out.push('', CAUTION);
  return out.join('\n');
}

/** The shell pass options from the parsed command options. */
function configureShell(v: OptionValues): ShellSpec {
  if (v.center === undefined || v.around === undefined || v.cutoff === undefined) throw new UsageError('shell needs --center, --around and --cutoff');
  return {
    center: v.center as string,
    around: v.around as string,
    cutoff: v.cutoff as number,
    tolerance: v.tolerance as number,
    segments: v.segments as number,
    fitFrom: (v.fitFrom as number | undefined) ?? null,
    fitTo: (v.fitTo as number | undefined) ?? null,
  };
}

/**
 * `shell`: how many neighbours sit in the first shell of each centre atom, and how long they stay
 * there (survival correlation with the Impey–Madden–McDonald tolerance, exponential residence time).
 */
export const shellAnalysis = defineAnalysis<ShellSpec, ShellPartial, ShellResult>({
  name: 'shell',
  summary: 'first-shell neighbour counts of centre atoms and how long neighbours stay (survival correlation, residence time)',
  options: [
    { key: 'center', flag: '--center <selection>', help: 'centre atoms, e.g. Li', type: { kind: 'text' } },
    { key: 'around', flag: '--around <selection>', help: 'neighbour atoms, e.g. el=O', type: { kind: 'text' } },
    { key: 'cutoff', flag: '--cutoff <length>', help: 'shell radius, e.g. 2.6A (take it from the first minimum of g(r))', type: { kind: 'quantity', dimension: 'length' } },
    { key: 'tolerance', flag: '--tolerance <time>', help: 'absences up to this long do not end a stay (Impey–Madden–McDonald t*)', type: { kind: 'quantity', dimension: 'time' }, default: '2ps' },
    { ...SHARED.segments('contiguous segments for the residence-time uncertainty'), default: String(DEFAULT_SHELL_SEGMENTS) },
    { key: 'fitFrom', flag: '--fit-from <time>', help: 'start of the exponential fit window (default: automatic)', type: { kind: 'quantity', dimension: 'time' } },
    { key: 'fitTo', flag: '--fit-to <time>', help: 'end of the exponential fit window (default: automatic)', type: { kind: 'quantity', dimension: 'time' } },
    SHARED.csvPrefix('write PREFIX-survival.csv and PREFIX-counts.csv'),
  ],
  configure: configureShell,
  pass: shellPass,
  render: (file, r) => renderShell(file, r),
  outputs: [
    {
      option: 'csv',
      write: (r) => [
        ['-survival.csv', toCsv(['time_ps', 'survival'], [r.survival.time, r.survival.value])],
        ['-counts.csv', toCsv(['neighbours', 'fraction'], [r.counts.values, r.counts.fractions])],
      ],
    },
  ],
});
