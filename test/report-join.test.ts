/**
 * The joins (src/transport.ts, shared by the report and `sojourn stokes`) and the report's
 * plumbing, checked against hand computations with published constants,
 * numerical derivatives (for the first-order propagation), the selection syntax, and the file
 * system (atomic directory output).
 */
import { describe, expect, it, afterAll } from 'vitest';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chargeLayoutOnStore, chooseRdfPairs, labelSelection, ALL_PAIRS_MAX_LABELS } from '../src/report/choose.js';
import { finiteQuantities, shellQuote } from '../src/report/build.js';
import { ionName } from '../src/report/joins.js';
import { vacfSamplingProblem, VACF_SAMPLING_RATIO } from '../src/report/sections/diffusion.js';
import { trapezoidExponentialBias } from '../src/numerics/trapezoid.js';
import {
  inputsWithoutUncertainty,
  joinInput,
  joinVerdict,
  limitingConductivityJoin,
  radiusRatioJoin,
  ratioJoin,
  rootSumSquares,
  stokesDiffusionJoin,
  stokesRadiusJoin,
  waldenJoin,
  yehHummerJoin,
} from '../src/transport.js';
import { MANIFEST, inspectReportTarget, stageDirectory, writeReportDirectory } from '../src/report/write.js';
import { selectAtoms } from '../src/selection.js';
import { speciesLayout } from '../src/store/sites.js';
import { crystalRadius } from '../src/radii.js';
import { UsageError } from '../src/errors.js';
import { quantity, type Topology } from '../src/types.js';

/** Boltzmann constant, J/K: exact in the 2019 SI (CODATA 2018), typed here independently of src/units.ts. */
const KB = 1.380649e-23;
/** ξ for a simple cubic periodic lattice, Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004). */
const XI = 2.837297;

const T = 298.15;
const D = quantity(2.0e-9, 0.1e-9, 'm^2/s');
const ETA = quantity(0.89e-3, 0.05e-3, 'Pa s');
const L = 30; // Å

/** Central-difference partial derivative (step h relative): truncation error O(h²). */
function partial(f: (x: number) => number, x: number, h = 1e-5): number {
  const d = Math.abs(x) * h;
  return (f(x + d) - f(x - d)) / (2 * d);
}

describe('Yeh–Hummer join', () => {
  it('adds k_B T ξ/(6π η L) with ξ = 2.837297 (Yeh & Hummer 2004)', () => {
    const { corrected, correction } = yehHummerJoin(D, ETA, T, L);
    const dd = (KB * T * XI) / (6 * Math.PI * ETA.value * L * 1e-10);
    // Same formula, same doubles: agreement to rounding (1e-12 relative).
    expect(correction.value).toBeCloseTo(dd, 22);
    expect(Math.abs(corrected.value - (D.value + dd)) / (D.value + dd)).toBeLessThan(1e-12);
    // Hand arithmetic (4 significant figures): 1.380649e-23·298.15·2.837297/(6π·0.89e-3·3e-9) = 2.321e-10 m²/s.
    expect(correction.value).toBeGreaterThan(2.3205e-10);
    expect(correction.value).toBeLessThan(2.3215e-10);
    expect(corrected.unit).toBe('m^2/s');
  });

  it('propagates u(D) and u(η) to first order (GUM eq. 10, checked by numerical derivatives)', () => {
    const { corrected } = yehHummerJoin(D, ETA, T, L);
    const f = (d: number, eta: number) => d + (KB * T * XI) / (6 * Math.PI * eta * L * 1e-10);
    const dD = partial((x) => f(x, ETA.value), D.value);
    const dEta = partial((x) => f(D.value, x), ETA.value);
    const u = Math.hypot(dD * D.uncertainty!, dEta * ETA.uncertainty!);
    // Central differences with h = 1e-5 are accurate to ~1e-9 relative here; 1e-6 leaves margin.
    expect(Math.abs(corrected.uncertainty! - u) / u).toBeLessThan(1e-6);
  });

  it('gives no uncertainty when neither input has one', () => {
    const { corrected } = yehHummerJoin(quantity(D.value, null, 'm^2/s'), quantity(ETA.value, null, 'Pa s'), T, L);
    expect(corrected.uncertainty).toBeNull();
  });
});

describe('Stokes–Einstein radius join', () => {
  it('without the box correction: r = k_B T/(6π η D) (Einstein 1905), hand value 1.2269 Å', () => {
    const r = stokesRadiusJoin(D, ETA, T, null, 'stick');
    const expected = (KB * T) / (6 * Math.PI * ETA.value * D.value) / 1e-10;
    expect(Math.abs(r.value - expected) / expected).toBeLessThan(1e-12);
    // Hand arithmetic: 4.11640e-21 / (6π · 0.89e-3 · 2e-9) = 1.2269e-10 m.
    expect(r.value).toBeGreaterThan(1.2268);
    expect(r.value).toBeLessThan(1.2270);
    expect(r.unit).toBe('A');
    // u(r)/r = √((u_D/D)² + (u_η/η)²) for a quotient of independent inputs (GUM eq. 12).
    const rel = Math.hypot(D.uncertainty! / D.value, ETA.uncertainty! / ETA.value);
    expect(Math.abs(r.uncertainty! / r.value - rel)).toBeLessThan(1e-12);
  });

  it('slip boundary (c = 4) gives 6/4 = 1.5 times the stick radius (Stokes 1851; Basset 1888)', () => {
    const stick = stokesRadiusJoin(D, ETA, T, L, 'stick');
    const slip = stokesRadiusJoin(D, ETA, T, L, 'slip');
    expect(slip.value / stick.value).toBeCloseTo(1.5, 12);
  });

  it('with D∞ = D + k_B T ξ/(6π η L): value and the correlated first-order uncertainty (numerical derivatives)', () => {
    const r = stokesRadiusJoin(D, ETA, T, L, 'stick');
    const g = (d: number, eta: number) => (KB * T) / (6 * Math.PI * eta * (d + (KB * T * XI) / (6 * Math.PI * eta * L * 1e-10))) / 1e-10;
    expect(Math.abs(r.value - g(D.value, ETA.value)) / r.value).toBeLessThan(1e-12);
    // Hand arithmetic: k_B T/(6π · 0.89e-3 · (2e-9 + 2.3207e-10)) = 1.0993e-10 m.
    expect(r.value).toBeGreaterThan(1.0992);
    expect(r.value).toBeLessThan(1.0994);
    const u = Math.hypot(partial((x) => g(x, ETA.value), D.value) * D.uncertainty!, partial((x) => g(D.value, x), ETA.value) * ETA.uncertainty!);
    expect(Math.abs(r.uncertainty! - u) / u).toBeLessThan(1e-6);
    // Treating D∞ and η as independent would overstate it: the η-dependence partly cancels.
    const naive = r.value * Math.hypot(Math.hypot(D.uncertainty!, (2.3207e-10 * ETA.uncertainty!) / ETA.value) / (D.value + 2.3207e-10), ETA.uncertainty! / ETA.value);
    expect(r.uncertainty!).toBeLessThan(naive);
  });
});

describe('Walden product join', () => {
  it('Λη in S m² Pa s/mol and × 10⁵ in S cm² P/mol (1 m² = 10⁴ cm², 1 Pa s = 10 P: CGS definitions)', () => {
    // Λ = 126.45 S cm²/mol is the order of the limiting molar conductivity of NaCl in water at
    // 25 °C (from memory; only the arithmetic is checked here).
    const lam = quantity(126.45e-4, 0.5e-4, 'S m^2/mol');
    const w = waldenJoin(lam, ETA);
    expect(Math.abs(w.si.value - 126.45e-4 * 0.89e-3) / w.si.value).toBeLessThan(1e-12);
    // Hand arithmetic: 126.45 S cm²/mol × 0.0089 P = 1.1254 S cm² P/mol.
    expect(w.conventional.value).toBeCloseTo(1.125405, 6);
    expect(w.conventional.unit).toBe('S cm^2 P/mol');
    const rel = Math.hypot(0.5 / 126.45, 0.05 / 0.89);
    expect(Math.abs(w.conventional.uncertainty! / w.conventional.value - rel)).toBeLessThan(1e-12);
  });
});

describe('joins when an input has no uncertainty (unknown is not exact)', () => {
  // An unconverged analysis reports its number with uncertainty null: it could not be estimated.
  // GUM eq. 10 needs every u(x_i), so the joined number has no uncertainty either — not the
  // smaller one the other input alone would give (JCGM 100:2008 §5.1.2).
  const dUnknown = quantity(D.value, null, 'm^2/s');
  const etaUnknown = quantity(ETA.value, null, 'Pa s');

  it('root-sum-square: 3-4-5 by hand; an exact contribution is 0, an unknown one makes the total unknown', () => {
    expect(Math.abs(rootSumSquares([3e-11, 4e-11])! - 5e-11)).toBeLessThan(1e-24);
    expect(rootSumSquares([3e-11, 0])).toBe(3e-11);
    expect(rootSumSquares([3e-11, null])).toBeNull();
  });

  it('Yeh–Hummer: D without uncertainty gives D∞ without one; the correction keeps ΔD·u(η)/η', () => {
    const { corrected, correction } = yehHummerJoin(dUnknown, ETA, T, L);
    expect(corrected.uncertainty).toBeNull();
    // u(ΔD) = ΔD·u(η)/η (∂ΔD/∂η = −ΔD/η), hand value 2.321e-10 × 0.05/0.89 = 1.304e-11 m²/s
    // (4 figures).
    const dd = (KB * T * XI) / (6 * Math.PI * ETA.value * L * 1e-10);
    expect(Math.abs(correction.uncertainty! - (dd * 0.05) / 0.89) / correction.uncertainty!).toBeLessThan(1e-12);
    expect(Math.abs(correction.uncertainty! - 1.304e-11)).toBeLessThan(0.001e-11);
    // η without uncertainty: neither the correction nor D∞ has one.
    const noEta = yehHummerJoin(D, etaUnknown, T, L);
    expect(noEta.correction.uncertainty).toBeNull();
    expect(noEta.corrected.uncertainty).toBeNull();
  });

  it('Stokes–Einstein radius and Walden product: one unknown input, no uncertainty', () => {
    expect(stokesRadiusJoin(dUnknown, ETA, T, L, 'stick').uncertainty).toBeNull();
    expect(stokesRadiusJoin(D, etaUnknown, T, L, 'stick').uncertainty).toBeNull();
    expect(stokesRadiusJoin(dUnknown, ETA, T, null, 'stick').uncertainty).toBeNull();
    expect(stokesRadiusJoin(D, etaUnknown, T, null, 'stick').uncertainty).toBeNull();
    const w = waldenJoin(quantity(126.45e-4, null, 'S m^2/mol'), ETA);
    expect(w.si.uncertainty).toBeNull();
    expect(w.conventional.uncertainty).toBeNull();
    expect(waldenJoin(quantity(126.45e-4, 0.5e-4, 'S m^2/mol'), etaUnknown).si.uncertainty).toBeNull();
  });

  it('the verdict names the input without an uncertainty and the unconverged ones', () => {
    const dIn = { name: 'D(Na), MSD', value: dUnknown, window: 'fit 10–50 ps', converged: false };
    const etaIn = { name: 'shear viscosity η (Green–Kubo)', value: ETA, window: 'fit 0–2 ps', converged: true };
    expect(inputsWithoutUncertainty([dIn, etaIn])).toEqual(['D(Na), MSD']);
    expect(joinVerdict([dIn, etaIn])).toEqual({ verdict: 'inputs not converged: D(Na), MSD; no uncertainty, because D(Na), MSD has none', ok: false });
    // Converged but still without an uncertainty: not ok either.
    expect(joinVerdict([{ ...dIn, converged: true }, { ...etaIn, value: etaUnknown }])).toEqual({
      verdict: 'no uncertainty, because D(Na), MSD and shear viscosity η (Green–Kubo) have none',
      ok: false,
    });
    expect(joinVerdict([{ ...dIn, value: D, converged: true }, etaIn])).toEqual({ verdict: 'inputs converged', ok: true });
  });

  it('every join gives an Estimate whose reason names the input without an uncertainty', () => {
    // The rule (JCGM 100:2008 §5.1.2 needs u(x_i) of every input): unknown stays unknown, and the
    // joined number says which input lacked one (code 'join.input-without-uncertainty').
    const dIn = joinInput('D(Na), MSD', dUnknown, 'fit 10–50 ps');
    const etaIn = joinInput('shear viscosity η (Green–Kubo)', ETA, 'fit 0–2 ps');
    const unknownReason = { code: 'join.input-without-uncertainty', text: 'no uncertainty, because D(Na), MSD has none', verdict: 'unreliable' };
    const joined = [
      yehHummerJoin(dIn, etaIn, T, L).corrected,
      stokesRadiusJoin(dIn, etaIn, T, L, 'stick'),
      limitingConductivityJoin(dIn, 1, T),
      ratioJoin(dIn, etaIn, '1'),
    ];
    for (const e of joined) {
      expect(e.uncertainty).toBeNull();
      expect(e.reasons).toEqual([unknownReason]);
      expect(e.verdict).toBe('unreliable');
    }
    // Only η matters for ΔD: with η known the correction keeps its uncertainty and its verdict.
    expect(yehHummerJoin(dIn, etaIn, T, L).correction.verdict).toBe('ok');
    // A plain number is named by the join; an unconverged input makes the join not converged.
    expect(stokesDiffusionJoin(quantity(2.38, null, 'A'), ETA, T, 'stick').reasons[0].text).toBe('no uncertainty, because the radius has none');
    const late = waldenJoin(joinInput('molar conductivity Λ', quantity(126.45e-4, 0.5e-4, 'S m^2/mol'), 'fit 1–5 ps', false), etaIn);
    expect(late.si.verdict).toBe('not-converged');
    expect(late.conventional.reasons.map((r) => r.code)).toEqual(['join.input-not-converged']);
    // r_H/r_crystal keeps the radius' verdict and reasons (the crystal radius is a table value).
    const r = stokesRadiusJoin(dIn, etaIn, T, L, 'stick');
    expect(radiusRatioJoin(r, 1.02).reasons).toEqual(r.reasons);
    // And with every uncertainty known: ok, no reasons, the same numbers as the checks above.
    const ok = stokesRadiusJoin(joinInput('D', D), etaIn, T, L, 'stick');
    expect([ok.verdict, ok.reasons.length]).toEqual(['ok', 0]);
    expect(ok.uncertainty).not.toBeNull();
  });
});

describe('VACF sampling check', () => {
  it('trapezoid bias for an exponential decay equals h(1+r)/2 over the exact area (fine-grid quadrature as the second source)', () => {
    for (const [h, tau] of [[0.2, 0.05], [0.01, 0.1], [0.1, 0.1]]) {
      const r = Math.exp(-h / tau);
      // Exact area by a 10⁵-step midpoint rule (error ~ (h/10⁵)²/24 relative: negligible).
      const M = 100000;
      let exact = 0;
      for (let k = 0; k < M; k++) exact += Math.exp(-((k + 0.5) * h) / M / tau) * (h / M);
      const bias = (h * (1 + r)) / 2 / exact - 1;
      expect(Math.abs(trapezoidExponentialBias(r) - bias)).toBeLessThan(1e-8);
    }
  });
  it(`flags a VACF that loses more than half of C(0) within one frame (threshold ${VACF_SAMPLING_RATIO}: ≈ 4 % first-step bias)`, () => {
    expect(trapezoidExponentialBias(VACF_SAMPLING_RATIO)).toBeCloseTo(0.04, 3);
    expect(vacfSamplingProblem([1, 0.8, 0.6], 0.01)).toBeNull();
    expect(vacfSamplingProblem([1, 0.0105, 0.02], 0.2)).toMatch(/too coarse/);
    expect(vacfSamplingProblem([1, -0.1, 0.02], 0.2)).toMatch(/too coarse/);
  });
});

describe('crystal radii of ions named from a label and a charge', () => {
  it('Na with +1 is Na+, whose six-coordinate radius is 1.02 Å (Shannon, Acta Cryst. A32, 751 (1976))', () => {
    expect(ionName('Na', 1)).toBe('Na+');
    expect(crystalRadius(ionName('Na', 1)!)?.radiusA).toBe(1.02);
    expect(ionName('Mg', 2)).toBe('Mg2+');
    expect(crystalRadius(ionName('Mg', 2)!)?.radiusA).toBe(0.72); // Shannon 1976, Mg2+ CN VI
  });
  it('no ion name (so no crystal radius) without a whole, non-zero charge', () => {
    expect(ionName('Cl', null)).toBeNull();
    expect(ionName('Cl', 0)).toBeNull();
    expect(ionName('O', -0.8476)).toBeNull();
  });
});

function topology(labels: string[]): Topology {
  return {
    atoms: labels.length,
    labels,
    elements: labels.map(() => 'X'),
    masses: new Float64Array(labels.length).fill(1),
    charges: null,
    residues: null,
  };
}

describe('g(r) pairs', () => {
  it('with few labels: every unordered pair, self-pairs included, n(n+1)/2 of them (combinatorics)', () => {
    const labels = [...Array(10).fill('W'), 'Na', 'Na', 'Cl', 'Cl'];
    const { pairs } = chooseRdfPairs(topology(labels), null);
    expect(pairs).toHaveLength((3 * 4) / 2);
    const keys = new Set(pairs.map((p) => [p.labelA, p.labelB].sort().join('|')));
    expect(keys.size).toBe(6);
  });

  it('leaves out the self-pair of a label with one atom (it has no distinct pair)', () => {
    const { pairs } = chooseRdfPairs(topology(['W', 'W', 'W', 'Mg']), null);
    expect(pairs.map((p) => `${p.labelA}-${p.labelB}`).sort()).toEqual(['Mg-W', 'W-W']);
  });

  it('puts charged and less numerous labels first as the centre A', () => {
    const t = topology([...Array(20).fill('W'), 'Na', 'Na', 'Cl', 'Cl', 'Cl']);
    const q = Float64Array.from(t.labels, (l) => (l === 'Na' ? 1 : l === 'Cl' ? -1 : 0));
    const { pairs } = chooseRdfPairs(t, q);
    const naW = pairs.find((p) => [p.labelA, p.labelB].includes('Na') && [p.labelA, p.labelB].includes('W'))!;
    expect(naW.labelA).toBe('Na');
  });

  it(`with more than ${ALL_PAIRS_MAX_LABELS} labels: exactly the pairs with a charged label, plus solvent–solvent`, () => {
    const labels = [...Array(30).fill('OW'), ...Array(60).fill('HW'), ...Array(5).fill('C1'), ...Array(5).fill('C2'), 'Li', 'Li', 'F', 'F'];
    const t = topology(labels);
    const q = Float64Array.from(labels, (l) => (l === 'Li' ? 1 : l === 'F' ? -1 : 0));
    const { pairs, rule } = chooseRdfPairs(t, q);
    const distinct = [...new Set(labels)];
    // Independent enumeration of the rule.
    const want = new Set<string>();
    for (const a of distinct) for (const b of distinct) {
      const k = [a, b].sort().join('|');
      if (a === 'Li' || a === 'F' || b === 'Li' || b === 'F' || (a === 'HW' && b === 'HW')) want.add(k);
    }
    const got = new Set(pairs.map((p) => [p.labelA, p.labelB].sort().join('|')));
    expect(got).toEqual(want);
    expect(rule).toMatch(/charged/);
    expect(rule).toMatch(/HW/); // the most numerous label is the solvent
  });
});

describe('selections for labels', () => {
  it('pick exactly the atoms of the label, also for labels the selection syntax would misread', () => {
    const labels = ['<script>', 'a,b', 'x*y', 'all', 'Na', 'a,b', 'all', 'p=q', 'Na', '<script>', 'x*y', 'x*yz'];
    const t = topology(labels);
    for (const l of new Set(labels)) {
      const sel = labelSelection(l, labels);
      const want = labels.flatMap((x, i) => (x === l ? [i] : []));
      expect(Array.from(selectAtoms(sel, t)), `${l} → ${sel}`).toEqual(want);
    }
  });
});

describe('conductivity sites on the shared store', () => {
  it('keeps one site per atom, charges per site, and the charged species as groups', () => {
    const labels = ['W', 'Na', 'W', 'Cl', 'Na', 'W'];
    const t = topology(labels);
    const layout = speciesLayout(t, {});
    const q = Float64Array.from(labels, (l) => (l === 'Na' ? 1 : l === 'Cl' ? -1 : 0));
    const cl = chargeLayoutOnStore(layout, q);
    expect(cl.sameGroups).toBe(true);
    expect(cl.groups.map((g) => [g.label, g.charge, Array.from(g.sites)])).toEqual([
      ['Na', 1, [1, 4]],
      ['Cl', -1, [3]],
    ]);
    expect(Array.from(cl.siteCharges)).toEqual(Array.from(q));
  });

  it('splits a label whose atoms carry different charges, and says the species groups differ', () => {
    const labels = ['Fe', 'Fe', 'O', 'O'];
    const cl = chargeLayoutOnStore(speciesLayout(topology(labels), {}), Float64Array.from([2, 3, -2, -2]));
    expect(cl.sameGroups).toBe(false);
    expect(cl.groups.map((g) => g.label)).toEqual(['Fe(+2)', 'Fe(+3)', 'O']);
  });
});

describe('results.json clean-up', () => {
  it('turns quantities with a non-finite value into null and bad uncertainties into null (schema: value is a number, uncertainty ≥ 0)', () => {
    const out = finiteQuantities({ a: { value: NaN, uncertainty: 1, unit: 'Pa s' }, b: { value: 1, uncertainty: -1, unit: 'K' }, c: [{ value: 2, uncertainty: Infinity, unit: 'A' }], d: 'x' });
    expect(out).toEqual({ a: null, b: { value: 1, uncertainty: null, unit: 'K' }, c: [{ value: 2, uncertainty: null, unit: 'A' }], d: 'x' });
  });
  it('quotes command-line arguments like a POSIX shell would need (IEEE Std 1003.1, 2.2.2 single quotes)', () => {
    expect(shellQuote('--out')).toBe('--out');
    expect(shellQuote("<script>=18")).toBe("'<script>=18'");
    expect(shellQuote("it's")).toBe(`'it'\\''s'`);
  });
});

describe('atomic report directory', () => {
  const root = mkdtempSync(join(tmpdir(), 'sojourn-report-write-'));
  afterAll(() => rmSync(root, { recursive: true, force: true }));
  const siblings = (dir: string, base: string) => readdirSync(dir).filter((n) => n.startsWith(`${base}.tmp-`) || n.startsWith(`${base}.old-`));

  it('creates a new directory and leaves no temporary sibling', async () => {
    const target = join(root, 'new', 'report');
    await writeReportDirectory(target, [{ name: 'results.json', data: '{"tool":"sojourn"}' }, { name: 'a.csv', data: 'x\n1\n' }]);
    expect(readdirSync(target).sort()).toEqual([MANIFEST, 'a.csv', 'results.json']);
    expect(siblings(join(root, 'new'), 'report')).toEqual([]);
  });

  it('replaces a previous sojourn report completely (no file of the old one survives)', async () => {
    const target = join(root, 'again');
    await writeReportDirectory(target, [{ name: 'results.json', data: '{"tool":"sojourn","n":1}' }, { name: 'old.svg', data: '<svg/>' }]);
    expect(inspectReportTarget(target)).toBe('previous-report');
    await writeReportDirectory(target, [{ name: 'results.json', data: '{"tool":"sojourn","n":2}' }]);
    expect(readdirSync(target).sort()).toEqual([MANIFEST, 'results.json']);
    expect(JSON.parse(readFileSync(join(target, 'results.json'), 'utf8')).n).toBe(2);
    expect(siblings(root, 'again')).toEqual([]);
  });

  it('refuses anything else at the target and leaves it untouched', async () => {
    const foreign = join(root, 'foreign');
    mkdirSync(foreign);
    writeFileSync(join(foreign, 'thesis.tex'), 'precious');
    const other = join(root, 'other-tool');
    mkdirSync(other);
    writeFileSync(join(other, 'results.json'), '{"tool":"something-else"}');
    const file = join(root, 'plain-file');
    writeFileSync(file, 'x');
    const empty = join(root, 'empty');
    mkdirSync(empty);
    const link = join(root, 'link');
    symlinkSync(foreign, link);
    for (const t of [foreign, other, file, empty, link]) {
      await expect(writeReportDirectory(t, [{ name: 'results.json', data: '{}' }]), t).rejects.toBeInstanceOf(UsageError);
    }
    expect(readFileSync(join(foreign, 'thesis.tex'), 'utf8')).toBe('precious');
    expect(readdirSync(empty)).toEqual([]);
    expect(readdirSync(root).filter((n) => n.includes('.tmp-'))).toEqual([]);
  });

  it('removes the staging directory when writing fails, and leaves no target', async () => {
    const target = join(root, 'fails');
    await expect(writeReportDirectory(target, [{ name: 'ok.csv', data: '1' }, { name: '../escape.csv', data: '2' }])).rejects.toThrow(/plain file name/);
    expect(existsSync(target)).toBe(false);
    expect(existsSync(join(root, 'escape.csv'))).toBe(false);
    expect(siblings(root, 'fails')).toEqual([]);
  });

  it('keeps a previous report when the new one fails, and refuses a target that turned foreign before commit', async () => {
    const target = join(root, 'kept');
    await writeReportDirectory(target, [{ name: 'results.json', data: '{"tool":"sojourn","n":1}' }]);
    await expect(writeReportDirectory(target, [{ name: 'a/b', data: '' }])).rejects.toThrow();
    expect(JSON.parse(readFileSync(join(target, 'results.json'), 'utf8')).n).toBe(1);
    const late = join(root, 'late');
    const staged = await stageDirectory(late);
    await staged.write('results.json', '{}');
    mkdirSync(late);
    writeFileSync(join(late, 'data.txt'), 'someone else');
    await expect(staged.commit()).rejects.toBeInstanceOf(UsageError);
    await staged.discard();
    expect(readFileSync(join(late, 'data.txt'), 'utf8')).toBe('someone else');
    expect(siblings(root, 'late')).toEqual([]);
  });
});
