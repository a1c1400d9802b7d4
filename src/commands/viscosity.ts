/**
 * `sojourn viscosity TABLE`: shear viscosity from a pressure-tensor time series by Green–Kubo
 * (time decomposition, Daivis–Evans component averaging) with an Einstein–Helfand cross-check.
 */
import { makePass } from '../../analyses/index.js';
import type { FramewisePartial } from '../../analyses/framewise.js';
import { readingContext, type CommandContext } from './common.js';
import { Option, type Command } from 'commander';
import { readTable, type TableData } from '../../readers/index.js';
import type { framewiseObservables } from '../../analyses/framewise.js';
import { pressureUnitOf, tableInput } from '../tables.js';
import { lowTemperatureWarning } from '../checks.js';
import {
  analyseViscosity,
  shearComponents,
  type StressColumns,
  type ViscosityAnalysis,
  type ViscosityResult,
} from '../../analyses/viscosity.js';
import { addOutputOptions, emit, parsePositiveTime, runOnTrajectory } from './common.js';
import { uniformStep } from './converge.js';
import { parseQuantity, UNIT_FACTORS } from '../units.js';
import { UsageError, InputError } from '../errors.js';
import { checkOutputFile, formatQuantity, formatSig, formatTable, stageFileSet, toCsv, type InputRecord } from '../output.js';
import { quantity, type Quantity } from '../types.js';
import { CAUTION } from '../caution.js';

interface ViscosityOptions {
  temperature: string;
  volume?: string;
  cellFrom?: string;
  pressureUnit?: string;
  timeUnit?: string;
  columns?: string;
  sampleInterval?: string;
  segments?: string;
  csv?: string;
  json?: boolean;
  quiet?: boolean;
}

/** The six tensor entries in the order of --columns. */
export const TENSOR_KEYS = ['xy', 'xz', 'yz', 'xx', 'yy', 'zz'] as const;
type TensorKey = (typeof TENSOR_KEYS)[number];

/**
 * Which tensor entry a column name stands for, or null: the name is lower-cased and stripped of
 * everything but letters and digits, then must read p|pres|pressure followed by two axis letters
 * ("pxy", "p_xy", "Pxy", "Pres-XY", "pressure_xy"); "yx" counts as "xy" (the pressure tensor of a
 * molecular fluid without couple stresses is symmetric; common practice, no source).
 */
export function tensorKeyOf(name: string): TensorKey | null {
  const m = /^(?:p|pres|press|pressure)([xyz])([xyz])$/.exec(name.toLowerCase().replace(/[^a-z0-9]/g, ''));
  if (!m) return null;
  const pair = [m[1], m[2]].sort().join('') as string;
  return (TENSOR_KEYS as readonly string[]).includes(pair) ? (pair as TensorKey) : null;
}

/**
 * Map tensor entries to table column names: with --columns, its 3 (xy, xz, yz) or 6 (…, xx, yy,
 * zz) names in that order; otherwise every column whose name `tensorKeyOf` recognises (two
 * columns for one entry are a usage error).
 */
export function pickStressColumns(names: string[], requested: string | undefined): Map<TensorKey, string> {
  const out = new Map<TensorKey, string>();
  if (requested !== undefined) {
    const parts = requested.split(',').map((s) => s.trim()).filter((s) => s.length > 0);
    if (parts.length !== 3 && parts.length !== 6) {
      throw new UsageError(`--columns: give 3 names (xy,xz,yz) or 6 (xy,xz,yz,xx,yy,zz), got ${parts.length}: "${requested}"`);
    }
    parts.forEach((p, i) => out.set(TENSOR_KEYS[i], p));
    return out;
  }
  for (const n of names) {
    const k = tensorKeyOf(n);
    if (k === null) continue;
    if (out.has(k)) throw new UsageError(`columns '${out.get(k)}' and '${n}' both look like P_${k}; choose with --columns`);
    out.set(k, n);
  }
  const off = ['xy', 'xz', 'yz'].filter((k) => out.has(k as TensorKey));
  if (off.length === 0 && !(out.has('xx') && out.has('yy'))) {
    throw new UsageError(`no pressure-tensor columns found among: ${names.join(', ')}; name them with --columns pxy,pxz,pyz[,pxx,pyy,pzz]`);
  }
  return out;
}

/** Stress columns of a table, in its pressure unit. */
function stressColumns(table: TableData, map: Map<TensorKey, string>): StressColumns {
  const cols: StressColumns = {};
  for (const [k, name] of map) {
    const v = table.columns.get(name) ?? [...table.columns.entries()].find(([n]) => n.toLowerCase() === name.toLowerCase())?.[1];
    if (!v) throw new UsageError(`${table.path}: no column named '${name}'; available columns: ${table.names.join(', ')}`);
    cols[k] = v;
  }
  return cols;
}

/** Mean cell volume (Å³) of a trajectory, from the per-frame volumes (no masses needed). */
async function volumeFromTrajectory(file: string, warnings: string[], quiet?: boolean): Promise<{ volume: number; input: InputRecord; varies: boolean }> {
  const pass = makePass<typeof framewiseObservables>('framewise');
  const run = await runOnTrajectory(file, { quiet, threads: '1' }, [pass], warnings, readingContext([]));
  const volumes = pass.finish(run.partials[0] as FramewisePartial, run.ctx).volume;
  if (!volumes || volumes.some((v) => !Number.isFinite(v))) throw new UsageError(`--cell-from ${file}: the trajectory has no periodic cell; give --volume instead`);
  let sum = 0;
  for (const v of volumes) sum += v;
  return { volume: sum / volumes.length, input: run.input, varies: volumes.some((v) => Math.abs(v - volumes[0]!) > 1e-9 * volumes[0]!) };
}

const mPas = (q: Quantity | null) => formatQuantity(q, 1e3, 'mPa·s');

/** Human-readable report of a viscosity result. */
export function renderViscosity(file: string, r: ViscosityResult, volumeA3: number, temperatureK: number): string {
  const out: string[] = [];
  const status = r.converged ? '' : '   NOT CONVERGED';
  out.push(`${file}: shear viscosity at ${formatSig(temperatureK, 5)} K, V = ${formatSig(volumeA3, 6)} Å³`);
  out.push(
    formatTable(
      ['quantity', 'value'],
      [
        ['viscosity (Green–Kubo)', `${mPas(r.viscosity)}${status}`],
        ['fit window', `${formatSig(r.fitWindow.from, 3)}–${formatSig(r.fitWindow.to, 4)} ps (cut-off where σ(t) > ${Math.round(r.cutoffFraction * 100)} % of η(t)${r.cutoffReached ? '' : '; not reached'})`],
        [
          'fit',
          r.fit.model === 'single exponential'
            ? `single exponential (double rejected, see the notes): A = ${formatSig(r.fit.A.value * 1e3, 4)} mPa·s/ps, τ = ${formatSig(r.fit.tau1.value, 4)} ps, weight 1/t^${formatSig(r.fit.b, 3)}`
            : `double exponential: A = ${formatSig(r.fit.A.value * 1e3, 4)} mPa·s/ps, α = ${formatSig(r.fit.alpha, 4)}, τ₁ = ${formatSig(r.fit.tau1.value, 4)} ps, τ₂ = ${formatSig(r.fit.tau2.value, 4)} ps, weight 1/t^${formatSig(r.fit.b, 3)}`,
        ],
        ['Helfand cross-check', r.helfand ? `${mPas(r.helfand)} (slope over ${formatSig(r.helfandWindow!.from, 3)}–${formatSig(r.helfandWindow!.to, 4)} ps)` : '—'],
        ['segments', `${r.segments} × ${formatSig(r.segmentLength.value, 4)} ps (${r.samples} samples every ${formatSig(r.sampleInterval.value, 4)} ps)`],
        ['stress correlation time', `${formatSig(r.correlationTime.value, 3)} ps`],
      ],
    ),
  );
  out.push('');
  out.push(
    formatTable(
      ['component', `η at cut-off (mPa·s)`],
      r.components.map((c) => [c.name, formatQuantity(c.runningIntegralEnd, 1e3, '')]),
    ),
  );
  out.push(`weighting: ${r.weighting}`);
  if (!r.converged) {
    out.push('');
    out.push('NOT CONVERGED — do not use this number without fixing the following:');
    for (const x of r.reasons) out.push(`  - ${x}`);
  }
  if (r.notes.length) {
    out.push('');
    for (const x of r.notes) out.push(`note: ${x}`);
  }
  out.push('');
  out.push(CAUTION);
  return out.join('\n');
}

/** CSV of the running integral: time (ps), η(t), σ(t), fitted η(t) (Pa s), at most 20000 rows. */
export function viscosityCsv(a: ViscosityAnalysis): string {
  const { time, eta, sigma, fit } = a.curves;
  const n = time.length;
  const stride = Math.max(1, Math.ceil(n / 20000));
  const idx: number[] = [];
  for (let k = 0; k < n; k += stride) idx.push(k);
  const pick = (x: Float64Array) => Float64Array.from(idx, (k) => x[k]);
  return toCsv(['time_ps', 'eta_Pa_s', 'sigma_Pa_s', 'fit_Pa_s'], [pick(time), pick(eta), pick(sigma), pick(fit)]);
}

export function register(program: Command, cc: CommandContext): void {
  const cmd = program
    .command('viscosity <table>')
    .description('shear viscosity from a pressure-tensor table: Green–Kubo (time decomposition, all shear components) with an Einstein–Helfand cross-check')
    .requiredOption('--temperature <T>', 'temperature of the run, e.g. 300K')
    .option('--volume <V>', 'system volume, e.g. 27nm^3 or 27000A^3')
    .option('--cell-from <trajectory>', 'take the mean cell volume from this trajectory instead of --volume')
    .addOption(new Option('--pressure-unit <unit>', 'unit of the pressure columns (default: the table\'s units line, else bar)').choices(Object.keys(UNIT_FACTORS.pressure)))
    .addOption(new Option('--time-unit <unit>', 'unit of the table\'s time column when the table does not say (default ps)').choices(Object.keys(UNIT_FACTORS.time)))
    .option('--columns <names>', 'pressure columns as xy,xz,yz or xy,xz,yz,xx,yy,zz (default: recognised by name, e.g. pxy, p_xy, Pxy)')
    .option('--sample-interval <time>', 'time between rows when the table has no time column, e.g. 2fs')
    .option('--segments <n>', 'number of independent segments for the time decomposition (default: up to 10, each ≥ 200 stress correlation times when possible)')
    .option('--csv <file>', 'write time, η(t), σ(t) and the fitted η(t) to this CSV file');
  addOutputOptions(cmd).action(async (file: string, opts: ViscosityOptions) => {
    const warnings: string[] = [];
    const temperatureK = parseQuantity(opts.temperature, 'temperature', '--temperature', 'K');
    if (!(temperatureK > 0)) throw new UsageError(`--temperature must be positive, got "${opts.temperature}"`);
    const lowT = lowTemperatureWarning(temperatureK);
    if (lowT) warnings.push(lowT);
    if ((opts.volume === undefined) === (opts.cellFrom === undefined)) {
      throw new UsageError('give exactly one of --volume and --cell-from');
    }
    const segments = opts.segments === undefined ? undefined : Number(opts.segments);
    if (segments !== undefined && !(Number.isInteger(segments) && segments >= 3)) {
      throw new UsageError(`--segments must be an integer ≥ 3, got "${opts.segments}"`);
    }
    if (opts.csv) checkOutputFile(opts.csv, [file, ...(opts.cellFrom ? [opts.cellFrom] : [])], '--csv');
    let dt = parsePositiveTime(opts.sampleInterval, '--sample-interval');
    const inputs: InputRecord[] = [];
    let volumeA3 = NaN;
    if (opts.volume !== undefined) {
      volumeA3 = parseQuantity(opts.volume, 'volume', '--volume');
      if (!(volumeA3 > 0)) throw new UsageError(`--volume must be positive, got "${opts.volume}"`);
    }
    let table: TableData | null = await readTable(file, {
      columns: opts.columns?.split(',').map((s) => s.trim()).filter(Boolean),
      warnings,
      ...(opts.timeUnit ? { timeUnit: { unit: opts.timeUnit, option: '--time-unit' } } : {}),
    });
    if (table.time) {
      const fileDt = uniformStep(table.time, file, table.timeQuantum);
      if (dt !== null && Math.abs(dt - fileDt) > 1e-3 * fileDt) {
        throw new UsageError(`--sample-interval ${dt} ps disagrees with the time column of ${file} (${fileDt} ps)`);
      }
      dt = fileDt;
    }
    if (dt === null) throw new UsageError(`${file} has no time column; give --sample-interval (e.g. 2fs)`);
    const map = pickStressColumns(table.names, opts.columns);
    const pressureUnit = pressureUnitOf(table, [...map.values()], opts.pressureUnit);
    const pascalPerUnit = UNIT_FACTORS.pressure[pressureUnit.unit]!;
    inputs.unshift(tableInput(table, { pressure: pressureUnit }));
    const cols = stressColumns(table, map);
    if (table.rows < 200) throw new InputError(file, null, null, `only ${table.rows} rows: far too few for a viscosity`);
    // The table is read and checked first: a bad table fails before the trajectory is read.
    if (opts.cellFrom !== undefined) {
      const v = await volumeFromTrajectory(opts.cellFrom, warnings, opts.quiet);
      volumeA3 = v.volume;
      inputs.push(v.input);
      if (v.varies) warnings.push(`${opts.cellFrom}: the cell volume varies; its mean (${formatSig(volumeA3, 6)} Å³) is used`);
    }
    // The table's arrays are ours: centre the off-diagonal ones in place, then let the table go.
    const components = shearComponents(cols, true);
    table = null;
    const analysis = analyseViscosity({ components, dt, volumeA3, temperatureK, pascalPerUnit, segments });
    const r = analysis.result;
    if (!r.converged) warnings.push(`viscosity not converged: ${r.reasons.join('; ')}`);
    if (opts.csv) await stageFileSet([[opts.csv, viscosityCsv(analysis)]], [file, ...(opts.cellFrom ? [opts.cellFrom] : [])]);
    const results = {
      ...r,
      temperature: quantity(temperatureK, null, 'K'),
      volume: quantity(volumeA3, null, 'A^3'),
      pressureUnit: pressureUnit.unit,
      columns: Object.fromEntries(map),
    };
    emit('viscosity', opts, inputs, { ...opts }, results, warnings, () => renderViscosity(file, r, volumeA3, temperatureK));
  });
}
