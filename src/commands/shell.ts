/**
 * `sojourn shell FILE --center Li --around el=O --cutoff 2.6A`: how many neighbours sit in the
 * first shell of each centre atom, and how long they stay there (survival correlation with the
 * Impey–Madden–McDonald tolerance and an exponential residence time).
 */
import type { Command } from 'commander';
import { shellPass, type ShellResult } from '../../analyses/shell.js';
import { addTrajectoryOptions, emit, runOnTrajectory, type TrajectoryOptions } from './common.js';
import { finishPasses } from '../runner.js';
import { parseQuantity } from '../units.js';
import { UsageError } from '../errors.js';
import { checkOutputPrefix, formatQuantity, formatSig, formatTable, stageFileSet, toCsv } from '../output.js';
import { CAUTION } from '../caution.js';

interface ShellOptions extends TrajectoryOptions {
  center?: string;
  around?: string;
  cutoff?: string;
  tolerance: string;
  segments: string;
  fitFrom?: string;
  fitTo?: string;
  csv?: string;
}

/** Human-readable text of a shell result. */
export function renderShell(file: string, r: ShellResult): string {
  const dist = r.counts.values
    .map((v, i) => [v, r.counts.fractions[i]] as const)
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

/** Register the command and its options on the program. */
export function register(program: Command): void {
  const cmd = program
    .command('shell <file>')
    .description('first-shell neighbour counts of centre atoms and how long neighbours stay (survival correlation, residence time)')
    .option('--center <selection>', 'centre atoms, e.g. Li')
    .option('--around <selection>', 'neighbour atoms, e.g. el=O')
    .option('--cutoff <length>', 'shell radius, e.g. 2.6A (take it from the first minimum of g(r))')
    .option('--tolerance <time>', 'absences up to this long do not end a stay (Impey–Madden–McDonald t*)', '2ps')
    .option('--segments <n>', 'contiguous segments for the residence-time uncertainty', '5')
    .option('--fit-from <time>', 'start of the exponential fit window (default: automatic)')
    .option('--fit-to <time>', 'end of the exponential fit window (default: automatic)')
    .option('--csv <prefix>', 'write PREFIX-survival.csv and PREFIX-counts.csv');
  addTrajectoryOptions(cmd).action(async (file: string, opts: ShellOptions) => {
    const warnings: string[] = [];
    if (!opts.center || !opts.around || !opts.cutoff) throw new UsageError('shell needs --center, --around and --cutoff');
    const cutoff = parseQuantity(opts.cutoff, 'length', '--cutoff');
    const tolerance = parseQuantity(opts.tolerance, 'time', '--tolerance');
    const segments = Number(opts.segments);
    if (!(Number.isInteger(segments) && segments >= 2)) throw new UsageError(`--segments must be a whole number ≥ 2, got "${opts.segments}"`);
    const fitFrom = opts.fitFrom !== undefined ? parseQuantity(opts.fitFrom, 'time', '--fit-from') : null;
    const fitTo = opts.fitTo !== undefined ? parseQuantity(opts.fitTo, 'time', '--fit-to') : null;
    const pass = shellPass({ center: opts.center, around: opts.around, cutoff, tolerance, segments, fitFrom, fitTo });
    if (opts.csv) checkOutputPrefix(opts.csv, '--csv');
    const run = await runOnTrajectory(file, opts, [pass], warnings);
    const results = finishPasses([pass], run.partials, run.ctx).shell as ShellResult;
    if (opts.csv) {
      const files: Array<[string, string]> = [
        [`${opts.csv}-survival.csv`, toCsv(['time_ps', 'survival'], [results.survival.time, results.survival.value])],
        [`${opts.csv}-counts.csv`, toCsv(['neighbours', 'fraction'], [results.counts.values, results.counts.fractions])],
      ];
      await stageFileSet(files, [file]);
      if (!opts.json && !opts.quiet) process.stderr.write(`sojourn: wrote ${files.map((f) => f[0]).join(', ')}\n`);
    }
    emit('shell', opts, [run.input], { ...opts }, results, warnings, () => renderShell(file, results));
  });
}
