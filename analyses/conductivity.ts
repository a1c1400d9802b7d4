/**
 * Ionic conductivity three ways, from one stored trajectory (the coordinate store of
 * analyses/msd.ts, shared with the per-species MSD):
 *
 * - Nernst–Einstein (ions independent): σ_NE = e²/(V k_B T) Σ_i N_i z_i² D_i with each species'
 *   MSD self-diffusion coefficient (src/transport.ts), uncertainty by first-order propagation
 *   of the D uncertainties (JCGM 100:2008).
 * - Einstein–Helfand (collective, includes ion–ion correlations):
 *     σ = lim_{t→∞} 1/(6 V k_B T) d/dt ⟨|ΔM(t)|²⟩,  M(t) = Σ_i q_i [r_i(t) − R(t)],
 *   with unwrapped, drift-corrected positions (R = the same centre of mass as the MSD; for a
 *   neutral system it cancels exactly), all time origins by FFT, slope over the automatic
 *   diffusive window of src/fit.ts (or the user's), uncertainty over independent segments
 *   (Helfand, Phys. Rev. 119, 1 (1960); e.g. Hansen & McDonald, Theory of Simple Liquids).
 * - Green–Kubo, when the file carries velocities:
 *     σ = 1/(3 V k_B T) ∫₀^∞ ⟨J(0)·J(t)⟩ dt,  J = Σ_i q_i v_i,
 *   value on the running integral's plateau (src/plateau.ts), uncertainty over segments (Green,
 *   J. Chem. Phys. 22, 398 (1954); Kubo, J. Phys. Soc. Jpn. 12, 570 (1957)).
 *
 * Ionicity σ/σ_NE (Einstein–Helfand over Nernst–Einstein) and the Haven ratio H = σ_NE/σ, both
 * with first-order uncertainties treating the two conductivities as independent (they are
 * positively correlated, so this overstates the uncertainty). Molar conductivity Λ = σ/c with
 * c the salt concentration, defined as the concentration of cations (count of cations /
 * (N_A ⟨V⟩)) — for a 1:1 salt the salt concentration; for other stoichiometries divide by the
 * number of cations per formula unit.
 *
 * Ions and other charged sites (`ionSites`): every charged site enters the collective current M
 * (or J), but only ions enter the Nernst–Einstein sum and the concentration. An ion is a single
 * atom with a non-zero whole charge (|q − round(q)| < 1e-6) that is not part of a larger
 * molecule (its residue, when the file has residues, carries the same net charge), or with
 * `molecules` a molecule with a non-zero whole net charge; or, when the user names them
 * (`ions`, for scaled-charge models), the sites the selection picks. Partial charges of neutral
 * molecules (water O −0.8476, H +0.4238) are not ions: their motion is part of the collective
 * current, but they carry no net charge and do not conduct independently.
 *
 * Green–Kubo is guarded as the VACF is (src/plateau.ts): the charge-current autocorrelation must keep
 * at least half of its zero-lag value after one frame interval (`correlationSamplingProblem`),
 * and the running integral must stay on its plateau (`plateauDriftCheck`).
 */
import type { Pass, PassContext, Quantity, Topology } from '../src/types.js';
import { quantity } from '../src/types.js';
import { asQuantity, estimate, hasReason, noteReason, reason, type Estimate, type Reason } from '../src/estimate.js';
import { parseSelection, selectAtoms } from '../src/selection.js';
import { UsageError } from '../src/errors.js';
import { AVOGADRO, BOLTZMANN, ELEMENTARY_CHARGE, CUBIC_ANGSTROM, A2_PER_PS } from '../src/units.js';
import { nernstEinsteinConductivity, nernstEinsteinUncertainty } from '../src/transport.js';
import { ratioWithUncertainty } from '../src/numerics/propagation.js';
import { sumOfAutocorrelations } from '../src/correlate.js';
import {
  fitSlopeWithSegments,
  maxLagIndex,
  uncertaintyRuleText,
  windowRuleText,
  DEFAULT_MAX_FRACTION,
} from '../src/fit.js';
import { correlationSamplingProblem } from '../src/plateau.js';
import { cumulativeTrapezoid } from '../src/numerics/trapezoid.js';
import { msdSumFft } from '../src/numerics/mean-squared-displacement.js';
import { chargeText, ionSites, type ChargeRule } from '../src/store/charges.js';
import { resolveLayout, type ChargedLayout, type IonLayoutSpec } from '../src/store/layout.js';
import { driftDescription, storeBytes, storePass, type StorePartial } from '../src/store/store.js';
import { StoreView } from '../src/store/view.js';
import { analyseMsd, DOES_NOT_MOVE, requireFrameInterval, type MsdResult, type ReadInfo } from './msd.js';

/** True for a species whose sites never move (D = 0 exactly: it adds nothing, and is no failed fit). */
function frozen(s: { diffusion: Estimate }): boolean {
  return hasReason(s.diffusion, DOES_NOT_MOVE);
}
import { plateauWithSegments, velocitySourceOf } from './vacf.js';

// ---------------------------------------------------------------------------------------------
// Pure conversions
// ---------------------------------------------------------------------------------------------

/**
 * Conductivity from a collective time integral: σ = I / (3 V k_B T) with I = ∫⟨J(0)·J(t)⟩dt in
 * e²Å²/ps (Green–Kubo), or I = slope/2 of ⟨|ΔM|²⟩ in e²Å²/ps (Einstein–Helfand: σ = slope/(6VkT)).
 * Units: e² · 1e-8 m²/s per e²Å²/ps, V in Å³ → S/m (Helfand 1960; Green 1954; Kubo 1957).
 */
export function conductivityFromIntegral(integralE2A2PerPs: number, volumeA3: number, temperatureK: number): number {
  return (
    (ELEMENTARY_CHARGE * ELEMENTARY_CHARGE * integralE2A2PerPs * A2_PER_PS) /
    (3 * volumeA3 * CUBIC_ANGSTROM * BOLTZMANN * temperatureK)
  );
}

/** Einstein–Helfand conductivity from the slope of ⟨|ΔM|²⟩ (e²Å²/ps): σ = slope/(6 V k_B T), S/m. */
export function einsteinHelfandFromSlope(slopeE2A2PerPs: number, volumeA3: number, temperatureK: number): number {
  return conductivityFromIntegral(slopeE2A2PerPs / 2, volumeA3, temperatureK);
}

/** Concentration c = N/(N_A V) in mol/m³ for N particles in V Å³ (1 mol/L = 1000 mol/m³). */
export function concentrationMolPerM3(count: number, volumeA3: number): number {
  return count / (AVOGADRO * volumeA3 * CUBIC_ANGSTROM);
}

// ---------------------------------------------------------------------------------------------
// Collective series
// ---------------------------------------------------------------------------------------------

/**
 * Collective series X_c(t) = Σ_s q_s [x_{s,c}(t) − R_c(t)] over frames [from, from+count), for
 * positions (M, e·Å) or with `velocity` for velocities (J, e·Å/ps); from the store's own
 * per-frame sums Σ q_s r_s when it kept them (`collectiveCharges`, same arithmetic).
 */
export function collectiveSeries(view: StoreView, q: Float64Array, from: number, count: number, velocity: boolean): Float64Array[] {
  const store = view.store;
  const drift = velocity ? store.comVelocity : store.com;
  const out = [0, 1, 2].map(() => new Float64Array(count));
  let qsum = 0;
  for (const x of q) qsum += x;
  // Sums kept by the store while reading (batched runs), else summed here from the sites.
  const kept = velocity ? store.collectiveVelocity : store.collective;
  for (let t = 0; t < count; t++) {
    let x = 0, y = 0, z = 0;
    if (kept) {
      const o = 3 * (from + t);
      x = kept[o];
      y = kept[o + 1];
      z = kept[o + 2];
    } else {
      const [arr, off] = view.at(from + t, velocity);
      for (let s = 0; s < q.length; s++) {
        const o = off + 3 * s;
        x += q[s] * arr[o];
        y += q[s] * arr[o + 1];
        z += q[s] * arr[o + 2];
      }
    }
    if (drift) {
      const d = 3 * (from + t);
      x -= qsum * drift[d];
      y -= qsum * drift[d + 1];
      z -= qsum * drift[d + 2];
    }
    out[0][t] = x;
    out[1][t] = y;
    out[2][t] = z;
  }
  return out;
}

/** ⟨|ΔM(m)|²⟩ over all origins (e²Å²) of frames [from, from+count), m = 0 … maxLag, by FFT. */
export function collectiveMsd(view: StoreView, q: Float64Array, from: number, count: number, maxLag: number): Float64Array {
  return msdSumFft(collectiveSeries(view, q, from, count, false), maxLag);
}

/** ⟨J(0)·J(m)⟩ over all origins (e²Å²/ps²), m = 0 … maxLag, by FFT. */
export function currentAutocorrelation(view: StoreView, q: Float64Array, from: number, count: number, maxLag: number): Float64Array {
  return sumOfAutocorrelations(collectiveSeries(view, q, from, count, true), { maxLag });
}

// ---------------------------------------------------------------------------------------------
// The analysis
// ---------------------------------------------------------------------------------------------

/** Options of the conductivity analysis. */
export interface ConductivityOptions {
  temperature: number;
  fitFrom?: number;
  fitTo?: number;
  tolerance?: number;
  maxFraction?: number;
  segments?: number;
  plateauTolerance?: number;
  plateauSpan?: number;
  /** Compute the Green–Kubo value when velocities exist (default true). */
  greenKubo?: boolean;
  /** Selection of the atoms to count as ions regardless of their charge (scaled-charge models). */
  ions?: string | null;
}

/** Per-species part of the result. */
export interface ConductivitySpecies {
  label: string;
  count: number;
  charge: number;
  /** True for ions (in the Nernst–Einstein sum and the concentration). */
  ion: boolean;
  /** Segments the D uncertainty rests on. */
  segments: number;
  /** D from the MSD of the species (its Estimate, src/estimate.ts). */
  diffusion: Estimate;
  fit: { from: number; to: number };
  converged: boolean;
  notes: string[];
  /** The notes, coded (src/estimate.ts), one for one. */
  reasons: Reason[];
}

/** Conductivity result (JSON `results`). */
export interface ConductivityResult {
  /** σ_NE; verdict 'not-determined' without ions, else the worst of its inputs' (each species' D from the MSD). */
  nernstEinstein: Estimate;
  /** σ_EH with its fit window (ps); 'ok' when the slope fit converged and gave an uncertainty. */
  einsteinHelfand: Estimate;
  /** σ_GK with its plateau window (ps); 'ok' when the plateau, drift and sampling checks passed. */
  greenKubo: Estimate | null;
  ionicity: Quantity;
  havenRatio: Quantity | null;
  molarConductivity: Quantity | null;
  concentration: Quantity | null;
  fit: { from: number; to: number; points: number; automatic: boolean };
  greenKuboPlateau: { from: number; to: number; found: boolean } | null;
  /** Whether the Green–Kubo value passed its checks (plateau, drift, sampling); null without it. */
  greenKuboConverged: boolean | null;
  /** The drift check of the Green–Kubo plateau (src/plateau.ts plateauDriftCheck): later lags in ps, change and its threshold in S/m. */
  greenKuboDrift: { from: number; to: number; change: number; error: number | null; threshold: number; drifting: boolean } | null;
  /** The ions: the species of the Nernst–Einstein sum and the concentration. */
  species: ConductivitySpecies[];
  /** Charged sites that are not ions (partial charges of neutral molecules): current only. */
  otherCharged: ConductivitySpecies[];
  volume: Quantity;
  temperature: Quantity;
  netCharge: number;
  converged: boolean;
  notes: string[];
  /**
   * The notes, coded (src/estimate.ts), one for one. A note is its reason's words, in the
   * `convergenceNote` form for those of the fits and plateaus, after "Einstein–Helfand: " or
   * "Green–Kubo: " for the reasons of those two values (whose Estimates carry them without it).
   */
  reasons: Reason[];
  curves: {
    time: Float64Array;
    /** ⟨|ΔM|²⟩, e²Å². */
    collectiveMsd: Float64Array;
    /** Running Green–Kubo conductivity, S/m (null without velocities). */
    greenKuboRunning: Float64Array | null;
  };
  frames: number;
  frameInterval: number;
  driftRemoved: boolean;
  driftNote: string;
  /** Bytes of coordinates held at once, reads of the file, and how the sites were batched. */
  bytesHeld: number;
  reads: number;
  memoryNote: string | null;
  rules: { window: string; uncertainty: string; concentration: string; ratios: string };
}

/** Notes for people and their coded twins, filled side by side (src/estimate.ts `noteReason`). */
interface NoteSink {
  notes: string[];
  reasons: Reason[];
}

/**
 * The charged groups of the layout with their MSD results, split into ions (Nernst–Einstein sum,
 * concentration) and other charged sites (current only), by `ionSites` or the group's own flag.
 */
function conductivitySpecies(
  layout: ChargedLayout,
  m: MsdResult,
  ctx: PassContext,
  opts: ConductivityOptions,
  sink: NoteSink,
): { all: ConductivitySpecies[]; species: ConductivitySpecies[]; otherCharged: ConductivitySpecies[] } {
  const { notes, reasons } = sink;
  const ionAtoms = opts.ions ? new Set(selectAtoms(opts.ions, ctx.topology)) : null;
  const ionInfo = ionSites(ctx.topology, layout, ionAtoms);
  for (const r of ionInfo.reasons) if (!notes.includes(r.text)) noteReason(notes, reasons, r);
  const all: ConductivitySpecies[] = layout.groups.map((g, i) => {
    const r = m.groups[i]!;
    let ion = g.ion;
    if (ion === undefined) {
      const flags = Array.from(g.sites, (s) => ionInfo.ion[s]);
      ion = flags.every((x) => x === 1);
      if (!ion && flags.some((x) => x === 1)) {
        noteReason(notes, reasons, reason('conductivity.mixed-group', `group ${g.label} mixes ions and partial-charge sites: it is left out of the Nernst–Einstein sum`));
      }
    }
    return {
      label: g.label,
      count: g.sites.length,
      charge: g.charge ?? 0,
      ion,
      segments: r.segments,
      diffusion: r.diffusion,
      fit: { from: r.fit.from, to: r.fit.to },
      converged: r.converged,
      notes: r.notes,
      reasons: r.reasons,
    };
  });
  return { all, species: all.filter((x) => x.ion), otherCharged: all.filter((x) => !x.ion) };
}

/**
 * Nernst–Einstein conductivity of the ions with its first-order uncertainty (src/transport.ts):
 * none when a D has none; 'not-determined' when there is no ion. Its verdict is its inputs' (the
 * D of every ion species: a join).
 */
function nernstEinsteinOf(species: ConductivitySpecies[], V: number, temp: number, sink: NoteSink): Estimate {
  const { notes, reasons } = sink;
  if (species.length === 0) {
    const r = reason(
      'conductivity.no-ions',
      'no site is an ion (no single atom or molecule with a non-zero whole charge): no Nernst–Einstein value, ' +
        'concentration or molar conductivity; for scaled charges name the ions with --ions',
      'not-converged',
    );
    noteReason(notes, reasons, r, '', true);
    return estimate(NaN, null, 'S/m', { verdict: 'not-determined', reasons: [r] });
  }
  const neInput = species.map((s) => ({ count: s.count, charge: s.charge, diffusion: s.diffusion.value }));
  const neValue = nernstEinsteinConductivity(neInput, V, temp);
  const allUnc = species.every((s) => s.diffusion.uncertainty !== null);
  const neUnc = allUnc
    ? nernstEinsteinUncertainty(species.map((s, i) => ({ ...neInput[i]!, diffusionError: s.diffusion.uncertainty! })), V, temp)
    : null;
  const neReasons: Reason[] = [];
  const unconverged = species.filter((x) => !x.converged && !frozen(x)).map((x) => x.label);
  if (unconverged.length) {
    neReasons.push(reason('conductivity.ne-input-not-converged', `the MSD diffusion coefficient of ${unconverged.join(', ')} did not converge`, 'not-converged'));
  }
  if (!allUnc) {
    const r = reason('conductivity.ne-without-uncertainty', 'some species D has no uncertainty: the Nernst–Einstein value has none', 'unreliable');
    noteReason(notes, reasons, r);
    neReasons.push(r);
  }
  return estimate(neValue, neUnc, 'S/m', { reasons: neReasons });
}

/** The Green–Kubo conductivity and its checks (null value without velocities). */
interface GreenKuboConductivity {
  greenKubo: Estimate | null;
  plateau: ConductivityResult['greenKuboPlateau'];
  running: Float64Array | null;
  converged: boolean;
  drift: ConductivityResult['greenKuboDrift'];
}

/**
 * Green–Kubo conductivity from the charge-current autocorrelation when the store has velocities
 * (or kept Σ q v): running integral by the trapezoid rule, value on its plateau with the segment
 * uncertainty and drift check (analyses/vacf.ts `plateauWithSegments`), and the sampling check
 * (src/plateau.ts). Its reasons go to the sink after "Green–Kubo: ".
 */
function greenKuboOf(
  store: StorePartial,
  view: StoreView,
  q: Float64Array,
  run: { T: number; maxLag: number; dt: number; V: number; temp: number },
  opts: ConductivityOptions,
  sink: NoteSink,
): GreenKuboConductivity {
  const { T, maxLag, dt, V, temp } = run;
  const { notes, reasons } = sink;
  const out: GreenKuboConductivity = { greenKubo: null, plateau: null, running: null, converged: true, drift: null };
  if ((opts.greenKubo ?? true) && (store.collective ? store.collectiveVelocity !== null : velocitySourceOf(store) === 'file')) {
    const toSigma = (c: Float64Array) => cumulativeTrapezoid(c, dt).map((x) => conductivityFromIntegral(x, V, temp));
    const jj = currentAutocorrelation(view, q, 0, T, maxLag);
    out.running = toSigma(jj);
    const pw = plateauWithSegments(out.running, T, { ...opts, timeStep: dt }, (start, count, lag) => toSigma(currentAutocorrelation(view, q, start, count, lag)));
    out.plateau = { from: pw.window.from * dt, to: pw.window.to * dt, found: pw.found };
    const d = pw.drift;
    out.drift = d.checked ? { from: d.from * dt, to: d.to * dt, change: d.drift, error: d.error, threshold: d.threshold, drifting: d.drifting } : null;
    const sampling = correlationSamplingProblem(jj, dt, 'the charge-current autocorrelation');
    out.converged = pw.converged && sampling === null;
    const gkReasons = [...pw.reasons];
    if (sampling) {
      gkReasons.push(reason('conductivity.coarse-sampling', `${sampling}; the Einstein–Helfand value does not depend on this sampling`, 'not-converged'));
    }
    for (const r of gkReasons) noteReason(notes, reasons, r, 'Green–Kubo: ', true);
    out.greenKubo = estimate(pw.value, pw.error, 'S/m', {
      window: { from: out.plateau.from, to: out.plateau.to, unit: 'ps' },
      verdict: out.converged && pw.error !== null ? 'ok' : 'not-converged',
      reasons: gkReasons,
    });
  } else if (opts.greenKubo ?? true) {
    noteReason(notes, reasons, reason(
      'conductivity.no-velocities',
      'Green–Kubo value not computed: the file carries no velocities (finite differences are not used for collective currents)',
    ));
  }
  return out;
}

/**
 * Conductivity from a finished store whose sites carry charges (`chargeLayout`). `msd` may be
 * given when the per-species MSD analysis of the same store has already run (no second
 * computation); otherwise it is run here without the non-Gaussian parameter.
 */
export function analyseConductivity(
  store: StorePartial,
  layout: ChargedLayout,
  ctx: PassContext,
  opts: ConductivityOptions,
  msd?: MsdResult,
  read?: ReadInfo,
): ConductivityResult {
  const dt = requireFrameInterval(ctx);
  const T = store.frames;
  const temp = opts.temperature;
  if (!(temp > 0)) throw new UsageError('conductivity needs a positive --temperature');
  const view = new StoreView(store);
  const V = view.meanVolume();
  if (V === null) throw new UsageError('conductivity needs the cell volume and the file has no cell: give --box');
  const q = layout.siteCharges;
  const notes: string[] = [];
  const reasons: Reason[] = [];
  let net = 0;
  for (const x of q) net += x;
  if (Math.abs(net) > 1e-6) {
    const w = `the charged sites are not neutral (net charge ${chargeText(net)} e): the Einstein–Helfand dipole depends on the drift treatment`;
    noteReason(notes, reasons, reason('conductivity.net-charge', w));
    ctx.warnings.push(w);
  }
  const m =
    msd ??
    analyseMsd(store, layout, ctx, {
      fitFrom: opts.fitFrom,
      fitTo: opts.fitTo,
      tolerance: opts.tolerance,
      maxFraction: opts.maxFraction,
      segments: opts.segments,
      nonGaussian: false,
    });
  // Ions (Nernst–Einstein, concentration) and the other charged sites (current only).
  const { all, species, otherCharged } = conductivitySpecies(layout, m, ctx, opts, { notes, reasons });
  const nernstEinstein = nernstEinsteinOf(species, V, temp, { notes, reasons });

  // Einstein–Helfand.
  const maxLag = Math.min(T - 1, Math.max(maxLagIndex(T, opts.maxFraction ?? DEFAULT_MAX_FRACTION), opts.fitTo !== undefined ? Math.floor(opts.fitTo / dt + 1e-9) : 0));
  const ehCurve = collectiveMsd(view, q, 0, T, maxLag);
  const sf = fitSlopeWithSegments(ehCurve, dt, T, opts, (start, count, lag) => collectiveMsd(view, q, start, count, lag));
  // No charged site moves: the collective displacement is constant, σ = 0 exactly (the fitted
  // slope would be round-off), and no ratio is built on it.
  const still = m.groups.length > 0 && m.groups.every((g) => hasReason(g.diffusion, DOES_NOT_MOVE));
  const stillReason = reason('conductivity.does-not-move', 'no charged site moves (frozen atoms?): σ = 0 exactly, and no ratio is built on it', 'not-determined');
  const ehValue = still ? 0 : einsteinHelfandFromSlope(sf.slope, V, temp);
  const ehUnc = still ? 0 : sf.slopeError === null ? null : einsteinHelfandFromSlope(sf.slopeError, V, temp);
  const ehReasons = still ? [stillReason] : sf.reasons;
  const einsteinHelfand = estimate(ehValue, ehUnc, 'S/m', {
    window: { from: sf.from, to: sf.to, unit: 'ps' },
    verdict: sf.converged && ehUnc !== null ? 'ok' : 'not-converged',
    reasons: ehReasons,
  });
  if (still) noteReason(notes, reasons, stillReason);
  else for (const r of sf.reasons) noteReason(notes, reasons, r, 'Einstein–Helfand: ', true);

  // Green–Kubo.
  const gk = greenKuboOf(store, view, q, { T, maxLag, dt, V, temp }, opts, { notes, reasons });

  const ionicity = species.length > 0 && !still ? ratioWithUncertainty(einsteinHelfand, nernstEinstein, '1') : quantity(NaN, null, '1');
  let havenRatio: Quantity | null = null;
  // One rule for a missing uncertainty (src/numerics/propagation.ts): unknown in, unknown out.
  if (ehValue > 0 && species.length > 0) havenRatio = ratioWithUncertainty(nernstEinstein, einsteinHelfand, '1');
  else if (!(ehValue > 0) && !still) noteReason(notes, reasons, reason('conductivity.no-haven-ratio', 'Einstein–Helfand conductivity is not positive: no Haven ratio'));

  let cations = 0;
  for (const x of species) if (x.charge > 0) cations += x.count;
  let concentration: Quantity | null = null;
  let molar: Quantity | null = null;
  if (cations > 0) {
    const c = concentrationMolPerM3(cations, V);
    concentration = quantity(c / 1000, null, 'mol/L');
    if (!still) molar = quantity(ehValue / c, ehUnc === null ? null : ehUnc / c, 'S m^2/mol');
  } else if (species.length > 0) {
    noteReason(notes, reasons, reason('conductivity.no-cations', 'no cations among the ions: no salt concentration and no molar conductivity'));
  }

  const greenKuboConverged = gk.greenKubo === null ? null : gk.converged;
  const converged = !still && sf.converged && gk.converged && species.length > 0 && species.every((s) => s.converged || frozen(s));
  return {
    nernstEinstein,
    einsteinHelfand,
    greenKubo: gk.greenKubo,
    ionicity,
    havenRatio,
    molarConductivity: molar,
    concentration,
    fit: { from: sf.from, to: sf.to, points: sf.points, automatic: sf.automatic },
    greenKuboPlateau: gk.plateau,
    greenKuboConverged,
    greenKuboDrift: gk.drift,
    species,
    otherCharged,
    volume: quantity(V, null, 'A^3'),
    temperature: quantity(temp, null, 'K'),
    netCharge: net,
    converged,
    notes,
    reasons,
    curves: {
      time: Float64Array.from(ehCurve, (_, k) => k * dt),
      collectiveMsd: ehCurve,
      greenKuboRunning: gk.running,
    },
    frames: T,
    frameInterval: dt,
    driftRemoved: store.com !== null,
    driftNote: driftDescription(store, ctx.topology),
    bytesHeld: read ? read.bytesHeld : storeBytes(store),
    reads: read ? read.reads : 1,
    memoryNote: read?.note ?? null,
    rules: {
      window: windowRuleText(opts),
      uncertainty: uncertaintyRuleText(opts, [
        ...all.map((x) => ({ label: `D(${x.label})`, segments: x.segments })),
        { label: 'Einstein–Helfand', segments: sf.segments },
      ]),
      concentration:
        'salt concentration c = (number of cations)/(N_A <V>): the salt concentration of a 1:1 salt; ions are single atoms or molecules with a non-zero whole charge ' +
        '(or the --ions selection); partial charges of neutral molecules enter the collective current only, not the Nernst–Einstein sum or c',
      ratios:
        'ionicity = σ_EH/σ_NE, Haven ratio = σ_NE/σ_EH; first-order uncertainties treating both as independent (an upper estimate: they are positively correlated)',
    },
  };
}

/** Options of the conductivity pass. */
export interface ConductivityPassOptions extends ConductivityOptions {
  /** Charge rules (parseChargeRules), or null to use the file's formal charges. */
  charges: ChargeRule[] | null;
  molecules?: boolean;
  keepDrift?: boolean;
}

/** Layout spec of the conductivity sites for the pass options (plain data; `resolveLayout` builds it). */
export function conductivityLayout(opts: { charges: ChargeRule[] | null; molecules?: boolean; ions?: string | null }): IonLayoutSpec {
  return { kind: 'ions', charges: opts.charges, molecules: !!opts.molecules, ions: opts.ions ?? null };
}

/** The conductivity Pass: one coordinate store, finished by `analyseConductivity`. */
export function conductivityPass(opts: ConductivityPassOptions): Pass<StorePartial, ConductivityResult> {
  const layout = conductivityLayout(opts);
  const store = storePass({ layout, removeDrift: !opts.keepDrift, keepVelocities: opts.greenKubo ?? true });
  return {
    name: 'conductivity',
    needsEvenSpacing: true,
    create: store.create,
    merge: store.merge,
    finish: (p, ctx) => analyseConductivity(p, resolveLayout(layout, ctx.topology), ctx, opts),
  };
}
