/**
 * `sojourn converge FILE`: when do averages become reliable? For each column of a table (or the
 * per-frame cell volume and density of a trajectory): equilibration point, statistical
 * inefficiency, effective samples, mean ± standard error, block averaging, drift, and a verdict.
 */
import { makePass } from '../../analyses/index.js';
import type { FramewisePartial } from '../../analyses/framewise.js';
import type { CommandContext } from './common.js';
import type { Command } from 'commander';
import { readTable, formatFromName } from '../../readers/index.js';
import { analyseSeries, type SeriesReport, type SeriesOptions } from '../../analyses/converge.js';
import { framewiseObservables, type FramewiseResult } from '../../analyses/framewise.js';
import { addTrajectoryOptions, emit, parsePositiveTime, runOnTrajectory, type TrajectoryOptions } from './common.js';
import { formatSig, formatTable, formatValue, type InputRecord } from '../output.js';
import { UsageError, InputError } from '../errors.js';
import { columnUnit, tableInput } from '../tables.js';

interface ConvergeOptions extends TrajectoryOptions {
  column?: string[];
  target?: string;
  sampleInterval?: string;
  minEffective?: string;
  units?: string;
}

/** Parse --target: "1%" (relative) or a plain number (absolute, in the series' unit). */
export function parseTarget(text: string | undefined): SeriesOptions['target'] {
  if (text === undefined) return undefined;
  const m = /^\s*([+]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(%?)\s*$/.exec(text);
  if (!m || !(Number(m[1]) > 0)) throw new UsageError(`--target: expected a positive number, or a percentage like 1%, got "${text}"`);
  return m[2] === '%' ? { relative: Number(m[1]) / 100 } : { absolute: Number(m[1]) };
}

/**
 * Time step between rows from a time column: the mean step (t_last − t_first)/(n − 1), which
 * every step must match to 0.1 %, or to the rounding of the times as written (`quantum`, the
 * step of their last decimal: rounding moves a step by up to one quantum, when the quantum is at
 * most 1/20 of the step).
 */
export function uniformStep(time: Float64Array, file: string, quantum = 0): number {
  const n = time.length;
  if (n < 2) throw new InputError(file, null, null, 'a time column with fewer than two rows gives no sample interval');
  const dt = (time[n - 1] - time[0]) / (n - 1);
  const rounding = 20 * quantum <= dt ? quantum * (1 + 1e-6) : 0;
  for (let i = 1; i < n; i++) {
    const d = time[i] - time[i - 1];
    if (Math.abs(d - dt) > Math.max(1e-3 * dt, rounding) + 1e-9 * Math.abs(time[i])) {
      throw new InputError(file, null, null, `time column is not evenly spaced (rows ${i} and ${i + 1} are ${d} ps apart, the mean spacing is ${dt} ps); resample the table first`);
    }
  }
  return dt;
}

function renderSeries(rows: SeriesReport[]): string {
  const t = formatTable(
    ['series', 'samples', 'equilibrated from', 'g', 'N_eff', 'mean ± SE', 'reliable'],
    rows.map((r) => [
      r.name,
      String(r.samples),
      r.equilibrationTime ? `${formatSig(r.equilibrationTime.value, 4)} ps` : `sample ${r.equilibrationIndex}`,
      formatSig(r.statisticalInefficiency, 3),
      String(Math.round(r.effectiveSamples)),
      `${formatValue(r.mean.value, r.standardError)}${r.mean.unit ? ' ' + r.mean.unit : ''}`,
      r.reliable ? 'yes' : 'NO',
    ]),
  );
  const verdicts = rows.map((r) => `- ${r.name}: ${r.verdict}`).join('\n');
  return `${t}\n\n${verdicts}`;
}

/** Parse --units "energy=kJ/mol,temp=K" into a map. */
function parseUnits(text: string | undefined): Map<string, string> {
  const m = new Map<string, string>();
  if (!text) return m;
  for (const part of text.split(',')) {
    const i = part.indexOf('=');
    if (i <= 0) throw new UsageError(`--units: expected NAME=UNIT pairs separated by commas, got "${part}"`);
    m.set(part.slice(0, i).trim(), part.slice(i + 1).trim());
  }
  return m;
}

export function register(program: Command, cc: CommandContext): void {
  const cmd = program
    .command('converge <file>')
    .description('when do averages become reliable: equilibration, statistical inefficiency, error bars, drift — per table column, or per-frame volume and density of a trajectory')
    .option('--column <names...>', 'table columns to analyse (default: every column except time)')
    .option('--target <precision>', 'wanted standard error: a percentage of the mean (1%) or an absolute value in the column\'s unit')
    .option('--sample-interval <time>', 'time between table rows when the table has no time column, e.g. 2fs')
    .option('--min-effective <n>', 'effective samples needed to call a mean reliable', '50')
    .option('--units <pairs>', 'units of table columns for the output, e.g. "epot=kJ/mol,temp=K"');
  addTrajectoryOptions(cmd).action(async (file: string, opts: ConvergeOptions) => {
    const warnings: string[] = [];
    const target = parseTarget(opts.target);
    const minEffective = Number(opts.minEffective);
    if (!(minEffective > 0)) throw new UsageError(`--min-effective must be a positive number, got "${opts.minEffective}"`);
    const units = parseUnits(opts.units);
    const series: SeriesReport[] = [];
    let input: InputRecord;
    if (formatFromName(file) !== null || opts.format) {
      const pass = makePass<typeof framewiseObservables>('framewise');
      const run = await runOnTrajectory(file, opts, [pass], warnings, cc);
      const fw = pass.finish(run.partials[0] as FramewisePartial, run.ctx);
      const dt = run.ctx.frameInterval;
      if (fw.volume) series.push(analyseSeries('cell volume', fw.volume, { dt, unit: 'A^3', target, minEffective }));
      if (fw.density) series.push(analyseSeries('number density', fw.density, { dt, unit: '1/A^3', target, minEffective }));
      if (series.length === 0) throw new UsageError(`${file} has no cell, so no per-frame volume or density to analyse; give a table of energies instead`);
      input = run.input;
    } else {
      const table = await readTable(file, { columns: opts.column, warnings, ...(opts.timeUnit ? { timeUnit: { unit: opts.timeUnit, option: '--time-unit' } } : {}) });
      let dt = parsePositiveTime(opts.sampleInterval, '--sample-interval');
      if (table.time) {
        const fileDt = uniformStep(table.time, file, table.timeQuantum);
        if (dt !== null && Math.abs(dt - fileDt) > 1e-3 * fileDt) {
          throw new UsageError(`--sample-interval ${dt} ps disagrees with the time column of ${file} (${fileDt} ps)`);
        }
        dt = fileDt;
      }
      for (const [name, values] of table.columns) {
        if (values === table.time) continue;
        series.push(analyseSeries(name, values, { dt, unit: columnUnit(table, name, units.get(name), '--units'), target, minEffective }));
      }
      input = tableInput(table);
    }
    const results = { series };
    emit('converge', opts, [input], { ...opts }, results, warnings, () => renderSeries(series));
  });
}
