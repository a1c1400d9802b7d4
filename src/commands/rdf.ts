/**
 * `sojourn rdf FILE --pair A:B ...`: radial distribution functions with running coordination
 * numbers, first-shell positions and block error bars; optionally the structure factor, the
 * Lennard-Jones energy and pressure routes and Kirkwood–Buff integrals from the same g(r).
 */
import { makePass } from '../../analyses/index.js';
import type { RdfPartial } from '../../analyses/rdf.js';
import type { CommandContext } from './common.js';
import type { Command } from 'commander';
import { Option } from 'commander';
import { rdfPass, type RdfResult, type RdfPairResult, type RdfSpec } from '../../analyses/rdf.js';
import { parseLennardJones } from '../../analyses/structure.js';
import { addTrajectoryOptions, emit, runOnTrajectory, type TrajectoryOptions } from './common.js';
import { finishPasses } from '../runner.js';
import { parseQuantity } from '../units.js';
import { UsageError } from '../errors.js';
import { checkOutputPrefix, formatQuantity, formatSig, formatTable, stageFileSet, toCsv } from '../output.js';
import { CAUTION } from '../caution.js';
import { AVOGADRO } from '../units.js';

interface RdfOptions extends TrajectoryOptions {
  pair?: string[];
  rMax?: string;
  binWidth: string;
  skipSameMolecule?: boolean;
  blocks?: string;
  csv?: string;
  search?: 'auto' | 'cells' | 'brute';
  structureFactor?: boolean;
  qMax: string;
  qStep: string;
  sqWindow: 'lorch' | 'none';
  lj?: string;
  temperature?: string;
  kirkwoodBuff?: boolean;
}

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

/** Build the pass configuration from the command-line options (all checks are usage errors). */
export function rdfSpecFromOptions(opts: RdfOptions): RdfSpec {
  const pairs = (opts.pair ?? []).map(parsePairOption);
  if (pairs.length === 0) throw new UsageError('rdf needs at least one --pair A:B');
  const binWidth = parseQuantity(opts.binWidth, 'length', '--bin-width');
  if (!(binWidth > 0)) throw new UsageError(`--bin-width must be positive, got "${opts.binWidth}"`);
  const rMax = opts.rMax !== undefined ? parseQuantity(opts.rMax, 'length', '--r-max') : null;
  if (rMax !== null && !(rMax > 0)) throw new UsageError(`--r-max must be positive, got "${opts.rMax}"`);
  let blocks: number | null = null;
  if (opts.blocks !== undefined) {
    blocks = Number(opts.blocks);
    if (!(Number.isInteger(blocks) && blocks >= 2)) throw new UsageError(`--blocks must be a whole number ≥ 2, got "${opts.blocks}"`);
  }
  const temperature = opts.temperature !== undefined ? parseQuantity(opts.temperature, 'temperature', '--temperature') : null;
  if (temperature !== null && !(temperature > 0)) throw new UsageError(`--temperature must be positive, got "${opts.temperature}"`);
  const qMax = parseWavenumber(opts.qMax, '--q-max');
  const qStep = parseWavenumber(opts.qStep, '--q-step');
  if (qStep >= qMax) throw new UsageError('--q-step must be smaller than --q-max');
  return {
    pairs,
    rMax,
    binWidth,
    skipSameMolecule: !!opts.skipSameMolecule,
    blocks,
    method: opts.search ?? 'auto',
    structureFactor: opts.structureFactor ? { qMax, qStep, window: opts.sqWindow } : null,
    lennardJones: opts.lj ? parseLennardJones(opts.lj) : null,
    temperature,
    kirkwoodBuff: !!opts.kirkwoodBuff,
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

/** CSV files for --csv PREFIX, staged as one set (they appear when the command succeeds); returns their names. */
export async function writeRdfCsv(prefix: string, r: RdfResult, inputs: string[]): Promise<string[]> {
  const all: Array<[string, string]> = [];
  for (const p of r.pairs) {
    const base = `${prefix}-${safeName(p.a)}-${safeName(p.b)}`;
    const files: Array<[string, string]> = [
      [`${base}.csv`, toCsv(['r_A', 'g', 'n', 'g_error'], [p.r, p.g, p.n, p.gError.map((x) => (x === null ? NaN : x))])],
    ];
    if (p.structureFactor) {
      const s = p.structureFactor;
      files.push([`${base}-sq.csv`, toCsv(['q_per_A', 'S', 'S_error'], [s.q, s.s, s.sError.map((x) => (x === null ? NaN : x))])]);
    }
    if (p.kirkwoodBuff) {
      const k = p.kirkwoodBuff;
      files.push([`${base}-kb.csv`, toCsv(['R_A', 'G_running_A3', 'G_finite_volume_A3'], [k.r, k.running, k.finiteVolume])]);
    }
    all.push(...files);
  }
  return stageFileSet(all, inputs);
}

function collect(value: string, previous: string[] | undefined): string[] {
  return [...(previous ?? []), value];
}

/** Register the command and its options on the program. */
export function register(program: Command, cc: CommandContext): void {
  const cmd = program
    .command('rdf <file>')
    .description('radial distribution functions g(r), running coordination numbers and first shells, with block error bars')
    .option('--pair <A:B>', 'two selections separated by ":" (repeatable), e.g. "Na:el=O"', collect)
    .option('--r-max <length>', 'largest distance (default and limit: half the smallest perpendicular cell width)')
    .option('--bin-width <length>', 'histogram bin width', '0.05A')
    .option('--skip-same-molecule', 'do not count pairs inside one molecule (needs residues, e.g. PDB)')
    .option('--blocks <n>', 'number of time blocks for the error bars (default: from the statistical inefficiency)')
    .option('--csv <prefix>', 'write PREFIX-A-B.csv (r, g, n, g_error) per pair')
    .addOption(new Option('--search <method>', 'neighbour search').choices(['auto', 'cells', 'brute']).default('auto'))
    .option('--structure-factor', 'also compute S(q) by Fourier transform of g(r), from q = 2π/r-max up (below it S(q) is set by the truncation of g)')
    .option('--q-max <1/A>', 'largest q of S(q)', '20')
    .option('--q-step <1/A>', 'q spacing of S(q)', '0.05')
    .addOption(new Option('--sq-window <name>', 'window on g(r) − 1 before the transform').choices(['lorch', 'none']).default('lorch'))
    .option('--lj <eps,sigma[,cutoff]>', 'Lennard-Jones 12-6 parameters for the energy and pressure routes, e.g. 0.996kJ/mol,3.405A,8.5A (eps in kJ/mol, kcal/mol, K or eV)')
    .option('--temperature <T>', 'temperature for the virial pressure, e.g. 120K')
    .option('--kirkwood-buff', 'also compute running and finite-volume Kirkwood–Buff integrals and the infinite-system value extrapolated in 1/L');
  addTrajectoryOptions(cmd).action(async (file: string, opts: RdfOptions) => {
    const warnings: string[] = [];
    const spec = rdfSpecFromOptions(opts);
    const pass = makePass<ReturnType<typeof rdfPass>>('rdf', spec);
    if (opts.csv) checkOutputPrefix(opts.csv, '--csv');
    const run = await runOnTrajectory(file, opts, [pass], warnings, cc);
    const results = pass.finish(run.partials[0] as RdfPartial, run.ctx);
    if (opts.csv) {
      const names = await writeRdfCsv(opts.csv, results, [file]);
      if (!opts.json && !opts.quiet) process.stderr.write(`sojourn: wrote ${names.join(', ')}\n`);
    }
    emit('rdf', opts, [run.input], { ...opts }, results, warnings, () => renderRdf(file, results));
  });
}
