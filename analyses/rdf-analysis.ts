/**
 * The `rdf` analysis as a command: radial distribution functions with running coordination
 * numbers, first-shell positions and block error bars; optionally the structure factor, the
 * Lennard-Jones energy and pressure routes and Kirkwood–Buff integrals from the same g(r).
 * The computation is analyses/rdf.ts; this module declares its options, text and files.
 */
import { rdfPass, type RdfPairResult, type RdfPartial, type RdfResult, type RdfSpec } from './rdf.js';
import { parseLennardJones } from './structure.js';
import { defineAnalysis } from '../src/engine/analysis.js';
import { SHARED, type OptionValues } from '../src/engine/options.js';
import { UsageError } from '../src/errors.js';
import { formatQuantity, formatSig, formatTable, toCsv } from '../src/output.js';
import { CAUTION } from '../src/caution.js';
import { AVOGADRO } from '../src/units.js';

/** Split "A:B" into its two selections (a selection never contains ':'). */
export function parsePairOption(text: string): { a: string; b: string } {
  const parts = text.split(':');
  if (parts.length !== 2 || parts[0].trim() === '' || parts[1].trim() === '') {
    throw new UsageError(`--pair: expected two selections separated by one ':', such as "Na:el=O" or "OW:OW"; got "${text}"`);
  }
  return { a: parts[0].trim(), b: parts[1].trim() };
}

/**
 * Parse a wavenumber such as "20", "20/A", "20 1/A" or "200/nm" into Å⁻¹ (a bare number is Å⁻¹).
 */
export function parseWavenumber(text: string, what: string): number {
  const m = /^\s*([+]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(1\/A|\/A|1\/Å|\/Å|1\/nm|\/nm)?\s*$/.exec(text);
  if (!m) throw new UsageError(`${what}: expected a positive number in 1/A (or 1/nm), got "${text}"`);
  const v = Number(m[1]) * (m[2] && m[2].includes('nm') ? 0.1 : 1);
  if (!(v > 0)) throw new UsageError(`${what} must be positive, got "${text}"`);
  return v;
}

/** A file-name-safe version of a selection text. */
export function safeName(sel: string): string {
  return sel.replace(/[^A-Za-z0-9._+-]+/g, '_');
}

/** The pass configuration from the parsed options (all checks are usage errors). */
export function configureRdf(v: OptionValues): RdfSpec {
  const pairs = ((v.pair as string[] | undefined) ?? []).map(parsePairOption);
  if (pairs.length === 0) throw new UsageError('rdf needs at least one --pair A:B');
  const qMax = parseWavenumber(v.qMax as string, '--q-max');
  const qStep = parseWavenumber(v.qStep as string, '--q-step');
  if (qStep >= qMax) throw new UsageError('--q-step must be smaller than --q-max');
  return {
    pairs,
    rMax: (v.rMax as number | undefined) ?? null,
    binWidth: v.binWidth as number,
    skipSameMolecule: v.skipSameMolecule === true,
    blocks: (v.blocks as number | undefined) ?? null,
    method: (v.search as RdfSpec['method'] | undefined) ?? 'auto',
    structureFactor: v.structureFactor === true ? { qMax, qStep, window: v.sqWindow as 'lorch' | 'none' } : null,
    lennardJones: typeof v.lj === 'string' ? parseLennardJones(v.lj) : null,
    temperature: (v.temperature as number | undefined) ?? null,
    kirkwoodBuff: v.kirkwoodBuff === true,
  };
}

/** One row of the human summary table: pair, first peak, first minimum, coordination number, blocks. */
function pairRow(p: RdfPairResult): string[] {
  return [
    `${p.a} : ${p.b}`,
    p.firstPeak ? formatSig(p.firstPeak.r, 4) : '—',
    p.firstPeak ? formatSig(p.firstPeak.g, 4) : '—',
    p.firstMinimum ? formatSig(p.firstMinimum.r, 4) : '—',
    p.firstMinimum ? formatSig(p.firstMinimum.g, 3) : '—',
    formatQuantity(p.coordinationNumber),
    String(p.blocks),
  ];
}

/** Human-readable text of a g(r) result. */
export function renderRdf(file: string, r: RdfResult): string {
  const out: string[] = [];
  out.push(`${file}: ${r.frames} frames, r-max ${formatSig(r.rMax.value, 5)} Å, bins ${formatSig(r.binWidth.value, 4)} Å`);
  out.push(formatTable(['pair', 'peak r/Å', 'g(peak)', 'min r/Å', 'g(min)', 'coordination (± SE)', 'blocks'], r.pairs.map(pairRow)));
  out.push(`Shells are located on g(r) smoothed by: ${r.pairs[0]?.smoothing ?? ''}.`);
  out.push('Coordination number = running integral 4πρ∫g r²dr at the first minimum; ± one standard error over time blocks.');
  for (const p of r.pairs) {
    const extra: string[][] = [];
    if (p.structureFactor) {
      const s = p.structureFactor;
      let k = 0;
      for (let i = 1; i < s.s.length; i++) if (s.s[i] > s.s[k]) k = i;
      extra.push([
        'S(q) main peak',
        s.s.length
          ? `q = ${formatSig(s.q[k], 4)} 1/Å, S = ${formatSig(s.s[k], 4)}${s.sError[k] !== null ? ' ± ' + formatSig(s.sError[k]!, 2) : ''} (window: ${s.window.split(' ')[0]})`
          : '— (no q at or above 2π/r-max)',
      ]);
      extra.push(['S(q) from', `q ≥ 2π/r-max = ${formatSig(s.qMin.value, 4)} 1/Å (below it S(q) is set by the truncation of g(r))`]);
    }
    if (p.lennardJones) {
      const lj = p.lennardJones;
      extra.push(['LJ energy U/N', `${formatQuantity(lj.energy)} (tail ${formatSig(lj.energyTail.value, 4)} kJ/mol, rc ${formatSig(lj.cutoff.value, 4)} Å)`]);
      extra.push([
        'LJ virial pressure',
        lj.pressure ? `${formatQuantity(lj.pressure, 1e-6, 'MPa')} (tail ${formatSig(lj.pressureTail!.value * 1e-6, 4)} MPa)` : 'needs --temperature',
      ]);
    }
    if (p.kirkwoodBuff) {
      const kb = p.kirkwoodBuff;
      const toCm3 = AVOGADRO * 1e-24; // Å³ per pair → cm³/mol
      const ex = kb.extrapolation;
      extra.push(['KB running G(R = r-max)', `${formatQuantity(kb.runningAtRMax)} = ${formatQuantity(kb.runningAtRMax, toCm3, 'cm^3/mol')}`]);
      extra.push(['KB finite volume G_V(L = r-max)', `${formatQuantity(kb.finiteVolumeAtRMax)} = ${formatQuantity(kb.finiteVolumeAtRMax, toCm3, 'cm^3/mol')}`]);
      extra.push([
        'KB infinite system G∞',
        `${formatQuantity(kb.infinite)} = ${formatQuantity(kb.infinite, toCm3, 'cm^3/mol')} ` +
          `(L·G_V = L·G∞ + F over L = ${formatSig(ex.from.value, 4)}–${formatSig(ex.to.value, 4)} Å; fit ± ${formatSig(ex.fitError.value, 2)}, blocks ± ${ex.blockError ? formatSig(ex.blockError.value, 2) : '—'} Å³)`,
      ]);
    }
    if (extra.length) out.push(`\n${p.a} : ${p.b}\n${formatTable(['quantity', 'value'], extra)}`);
  }
  const flagged = r.pairs.filter((p) => !p.converged);
  if (flagged.length) out.push(`\nNot converged: ${flagged.map((p) => `${p.a}:${p.b} (${p.notes.join('; ')})`).join('; ')}`);
  out.push('');
  out.push(CAUTION);
  return out.join('\n');
}

/** The CSV files of a result for --csv PREFIX: [suffix, text] per pair (g, S(q), Kirkwood–Buff). */
export function rdfCsvFiles(r: RdfResult): Array<[string, string]> {
  const all: Array<[string, string]> = [];
  for (const p of r.pairs) {
    const base = `-${safeName(p.a)}-${safeName(p.b)}`;
    all.push([`${base}.csv`, toCsv(['r_A', 'g', 'n', 'g_error'], [p.r, p.g, p.n, p.gError.map((x) => (x === null ? NaN : x))])]);
    if (p.structureFactor) {
      const s = p.structureFactor;
      all.push([`${base}-sq.csv`, toCsv(['q_per_A', 'S', 'S_error'], [s.q, s.s, s.sError.map((x) => (x === null ? NaN : x))])]);
    }
    if (p.kirkwoodBuff) {
      const k = p.kirkwoodBuff;
      all.push([`${base}-kb.csv`, toCsv(['R_A', 'G_running_A3', 'G_finite_volume_A3'], [k.r, k.running, k.finiteVolume])]);
    }
  }
  return all;
}

/** `rdf`: g(r), running coordination numbers and first shells, with block error bars. */
export const rdfAnalysis = defineAnalysis<RdfSpec, RdfPartial, RdfResult>({
  name: 'rdf',
  summary: 'radial distribution functions g(r), running coordination numbers and first shells, with block error bars',
  options: [
    { key: 'pair', flag: '--pair <A:B>', help: 'two selections separated by ":" (repeatable), e.g. "Na:el=O"', type: { kind: 'list' } },
    { key: 'rMax', flag: '--r-max <length>', help: 'largest distance (default and limit: half the smallest perpendicular cell width over the run)', type: { kind: 'quantity', dimension: 'length', positive: true } },
    { key: 'binWidth', flag: '--bin-width <length>', help: 'histogram bin width', type: { kind: 'quantity', dimension: 'length', positive: true }, default: '0.05A' },
    { key: 'skipSameMolecule', flag: '--skip-same-molecule', help: 'do not count pairs inside one molecule (needs residues, e.g. PDB)', type: { kind: 'flag' } },
    { key: 'blocks', flag: '--blocks <n>', help: 'number of time blocks for the error bars (default: from the statistical inefficiency)', type: { kind: 'integer', min: 2 } },
    SHARED.csvPrefix('write PREFIX-A-B.csv (r, g, n, g_error) per pair'),
    { key: 'search', flag: '--search <method>', help: 'neighbour search', type: { kind: 'choice', choices: ['auto', 'cells', 'brute'] }, default: 'auto' },
    {
      key: 'structureFactor',
      flag: '--structure-factor',
      help: 'also compute S(q) by Fourier transform of g(r), from q = 2π/r-max up (below it S(q) is set by the truncation of g)',
      type: { kind: 'flag' },
    },
    { key: 'qMax', flag: '--q-max <1/A>', help: 'largest q of S(q)', type: { kind: 'text' }, default: '20' },
    { key: 'qStep', flag: '--q-step <1/A>', help: 'q spacing of S(q)', type: { kind: 'text' }, default: '0.05' },
    { key: 'sqWindow', flag: '--sq-window <name>', help: 'window on g(r) − 1 before the transform', type: { kind: 'choice', choices: ['lorch', 'none'] }, default: 'lorch' },
    {
      key: 'lj',
      flag: '--lj <eps,sigma[,cutoff]>',
      help: 'Lennard-Jones 12-6 parameters for the energy and pressure routes, e.g. 0.996kJ/mol,3.405A,8.5A (eps in kJ/mol, kcal/mol, K or eV)',
      type: { kind: 'text' },
    },
    { ...SHARED.temperature('temperature for the virial pressure, e.g. 120K'), type: { kind: 'quantity', dimension: 'temperature', positive: true } },
    {
      key: 'kirkwoodBuff',
      flag: '--kirkwood-buff',
      help: 'also compute running and finite-volume Kirkwood–Buff integrals and the infinite-system value extrapolated in 1/L',
      type: { kind: 'flag' },
    },
  ],
  configure: configureRdf,
  pass: rdfPass,
  render: (file, r) => renderRdf(file, r),
  // A user r-max every frame's cell must allow, checked before the read (the default fits every frame).
  reach: (o) => (o.rMax !== null ? { distance: o.rMax, flag: '--r-max' } : null),
  outputs: [{ option: 'csv', write: (r) => rdfCsvFiles(r) }],
});
