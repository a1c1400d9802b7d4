/**
 * `sojourn report TRAJ --temperature 300K --out DIR [--pressure TABLE] [--energy TABLE]
 * [--charges Na=+1,Cl=-1]`: every analysis that applies, from ONE read of the trajectory, joined
 * into one report directory (results.json, a CSV per curve, an SVG per plot, report.html).
 *
 * The trajectory passes share the read: the overview, per-frame volume and density, one
 * coordinate store (every atom; velocities when the file has them) from which the MSD per
 * species, the VACF and the conductivity all finish without a second copy, g(r) for the pairs of
 * src/report/build.ts `chooseRdfPairs`, and optional neighbour shells. The tables (pressure
 * tensor → viscosity and column convergence; energies → column convergence) are read after the
 * trajectory. Joins and files come from src/report/build.ts; the directory is written atomically
 * by src/report/write.ts.
 */
import * as path from 'node:path';
import { isMainThread } from 'node:worker_threads';
import { Option, type Command } from 'commander';
import { readTable, type TableData } from '../../readers/index.js';
import { overviewPass, massDensity, type OverviewResult } from '../../analyses/overview.js';
import { framewiseObservables, type FramewiseResult } from '../../analyses/framewise.js';
import { rdfPass, mergeRdfPartials, type RdfPartial, type RdfSpec } from '../../analyses/rdf.js';
import { shellPass, type ShellResult } from '../../analyses/shell.js';
import { analyseMsd, speciesLayout, storePass, yehHummerBoxLength, type MsdResult, type StorePartial } from '../../analyses/msd.js';
import { analyseVacf, velocitySourceOf, type VacfResult } from '../../analyses/vacf.js';
import { analyseConductivity, atomCharges, parseChargeRules, type ChargeRule, type ConductivityResult } from '../../analyses/conductivity.js';
import { analyseViscosity, shearComponents, type StressColumns } from '../../analyses/viscosity.js';
import { analyseSeries } from '../../analyses/converge.js';
import { addTrajectoryOptions, parsePositiveTime, printWarnings, runOnTrajectory, type TrajectoryOptions } from './common.js';
import { currentInvocation, workerCapture } from './parallel.js';
import { uniformStep } from './converge.js';
import { pickStressColumns } from './viscosity.js';
import { parseQuantity, UNIT_FACTORS } from '../units.js';
import { AnalysisError, UsageError } from '../errors.js';
import { refuseOverwritingInputs, toJson, type InputRecord } from '../output.js';
import { VERSION } from '../version.js';
import type { Pass, PassContext, Topology } from '../types.js';
import type { Boundary } from '../transport.js';
import { chargeLayoutOnStore, chooseRdfPairs, type RdfPairChoice } from '../report/choose.js';
// The report writers (plots, HTML) are loaded only when a report is written, not in workers.
import type { ReportData } from '../report/build.js';
import type { StagedDirectory } from '../report/write.js';

interface ReportCliOptions extends TrajectoryOptions {
  out: string;
  temperature: string;
  pressure?: string;
  energy?: string;
  charges?: string;
  pressureUnit: string;
  pressureColumns?: string;
  pressureInterval?: string;
  energyInterval?: string;
  energyUnits?: string;
  boundary: Boundary;
  shell?: string[];
  rdfBinWidth: string;
  rdfRMax?: string;
}

/** Result of the report's g(r) pass: the g(r) result and the pairs, or why it was not run. */
export type ReportRdf = { result: ReturnType<ReturnType<typeof rdfPass>['finish']>; pairs: RdfPairChoice[]; rule: string } | { skipped: string };

/** Charges per atom from --charges rules, else the file's formal charges when any is non-zero, else null. */
export function chargesFor(topology: Topology, rules: ChargeRule[] | null): Float64Array | null {
  if (rules) return atomCharges(topology, rules);
  if (topology.charges && topology.charges.some((q) => q !== 0)) return Float64Array.from(topology.charges);
  return null;
}

/**
 * The g(r) pass of the report. Its pairs depend on the labels, which are known only when the
 * first frame arrives, so the real pass (analyses/rdf.ts) is built in `create` and again in
 * `finish` from the same topology by the same rule (chooseRdfPairs, deterministic). Without a
 * periodic cell the pass records why it was not run.
 */
export function reportRdfPass(spec: Omit<RdfSpec, 'pairs'>, rules: ChargeRule[] | null): Pass<RdfPartial | { skipped: string }, ReportRdf> {
  const choose = (ctx: PassContext) => chooseRdfPairs(ctx.topology, chargesFor(ctx.topology, rules));
  const inner = (choice: { pairs: RdfPairChoice[] }) => rdfPass({ ...spec, pairs: choice.pairs.map((p) => ({ a: p.a, b: p.b })) });
  return {
    name: 'rdf',
    create(ctx) {
      if (!ctx.firstCell) {
        const skipped = { skipped: 'the trajectory has no periodic cell: give it with --box a,b,c' };
        return { frame() {}, partial: () => skipped };
      }
      return inner(choose(ctx)).create(ctx);
    },
    merge(a, b) {
      if ('skipped' in a) return a;
      if ('skipped' in b) return b;
      return mergeRdfPartials(a, b);
    },
    finish(p, ctx) {
      if ('skipped' in p) return p;
      const choice = choose(ctx);
      return { result: inner(choice).finish(p, ctx), ...choice };
    },
  };
}

/** Parse --shell "CENTRE:AROUND:CUTOFF" (selections cannot contain ':'), e.g. "Na:Sv:3.4A". */
export function parseShellOption(text: string): { center: string; around: string; cutoff: number; text: string } {
  const parts = text.split(':');
  if (parts.length !== 3 || parts.some((p) => p.trim() === '')) {
    throw new UsageError(`--shell: expected CENTRE:AROUND:CUTOFF such as "Na:Sv:3.4A", got "${text}"`);
  }
  const cutoff = parseQuantity(parts[2].trim(), 'length', '--shell cutoff', 'A');
  if (!(cutoff > 0)) throw new UsageError(`--shell: the cutoff must be positive, got "${parts[2]}"`);
  return { center: parts[0].trim(), around: parts[1].trim(), cutoff, text };
}

/** Parse "name=unit,name=unit" for table columns. */
export function parseColumnUnits(text: string | undefined): Map<string, string> {
  const m = new Map<string, string>();
  if (!text) return m;
  for (const part of text.split(',')) {
    const i = part.indexOf('=');
    if (i <= 0 || i === part.length - 1) throw new UsageError(`--energy-units: expected NAME=UNIT pairs separated by commas, got "${part}"`);
    m.set(part.slice(0, i).trim(), part.slice(i + 1).trim());
  }
  return m;
}

function collect(value: string, previous: string[] | undefined): string[] {
  return [...(previous ?? []), value];
}

/** Run `f`; an AnalysisError (valid data, no defensible number) becomes a skip reason instead. */
function attempt<T>(what: string, skipped: Record<string, string>, f: () => T): T | null {
  try {
    return f();
  } catch (e) {
    if (e instanceof AnalysisError) {
      skipped[what] = e.message;
      return null;
    }
    throw e;
  }
}

/** Sample interval of a table: its time column (evenly spaced), or the option, or null. */
function tableInterval(table: TableData, given: number | null, option: string): number | null {
  if (!table.time) return given;
  const dt = uniformStep(table.time, table.path);
  if (given !== null && Math.abs(given - dt) > 1e-3 * dt) throw new UsageError(`${option} ${given} ps disagrees with the time column of ${table.path} (${dt} ps)`);
  return dt;
}

/** Refuse an output directory that is an input or contains one (replacing it would delete the input). */
function refuseInputsInside(out: string, inputs: string[]): void {
  refuseOverwritingInputs(out, inputs);
  const dir = path.resolve(out) + path.sep;
  for (const i of inputs) {
    if (i !== '-' && path.resolve(i).startsWith(dir)) throw new UsageError(`input ${i} lies inside --out ${out}; a new report would replace that directory`);
  }
}

/** Register the command on the program (src/commands/index.ts). */
export function register(program: Command): void {
  const cmd = program
    .command('report <trajectory>')
    .description('every applicable analysis from one read of the trajectory (plus pressure and energy tables), joined, written atomically to a directory: results.json, CSV, SVG, report.html')
    .requiredOption('--out <dir>', 'report directory to create (a previous sojourn report there is replaced; anything else is refused)')
    .requiredOption('--temperature <T>', 'temperature of the run, e.g. 300K')
    .option('--pressure <table>', 'pressure-tensor table (columns pxy, pxz, pyz[, pxx, pyy, pzz] and time): viscosity and column convergence')
    .option('--energy <table>', 'table of energies or other observables over time: convergence of every column')
    .option('--charges <list>', 'charges by selection, e.g. "Na=+1,Cl=-1" (default: the formal charges in the file, if any)')
    .addOption(new Option('--pressure-unit <unit>', 'unit of the pressure columns').choices(Object.keys(UNIT_FACTORS.pressure)).default('bar'))
    .option('--pressure-columns <names>', 'pressure columns as xy,xz,yz or xy,xz,yz,xx,yy,zz (default: recognised by name)')
    .option('--pressure-interval <time>', 'time between pressure rows when the table has no time column, e.g. 4fs')
    .option('--energy-interval <time>', 'time between energy rows when the table has no time column')
    .option('--energy-units <pairs>', 'units of the energy-table columns, e.g. "potential=kJ/mol,temperature=K"')
    .addOption(new Option('--boundary <kind>', 'Stokes–Einstein boundary condition for hydrodynamic radii').choices(['stick', 'slip']).default('stick'))
    .option('--shell <centre:around:cutoff>', 'also count neighbours of CENTRE within CUTOFF and their residence time (2 ps tolerance; repeatable), e.g. "Na:Sv:3.4A"', collect)
    .option('--rdf-bin-width <length>', 'g(r) bin width', '0.05A')
    .option('--rdf-r-max <length>', 'largest g(r) distance (default: half the smallest cell width)');
  addTrajectoryOptions(cmd).action(async (file: string, opts: ReportCliOptions) => {
    const t0 = performance.now();
    const started = new Date();
    const warnings: string[] = [];
    const temperatureK = parseQuantity(opts.temperature, 'temperature', '--temperature', 'K');
    if (!(temperatureK > 0)) throw new UsageError(`--temperature must be positive, got "${opts.temperature}"`);
    const rules = opts.charges !== undefined ? parseChargeRules(opts.charges) : null;
    const binWidth = parseQuantity(opts.rdfBinWidth, 'length', '--rdf-bin-width', 'A');
    if (!(binWidth > 0)) throw new UsageError(`--rdf-bin-width must be positive, got "${opts.rdfBinWidth}"`);
    const rMax = opts.rdfRMax !== undefined ? parseQuantity(opts.rdfRMax, 'length', '--rdf-r-max', 'A') : null;
    if (rMax !== null && !(rMax > 0)) throw new UsageError(`--rdf-r-max must be positive, got "${opts.rdfRMax}"`);
    const shells = (opts.shell ?? []).map(parseShellOption);
    const energyUnits = parseColumnUnits(opts.energyUnits);
    const pressureInterval = parsePositiveTime(opts.pressureInterval, '--pressure-interval');
    const energyInterval = parsePositiveTime(opts.energyInterval, '--energy-interval');
    const pascalPerUnit = UNIT_FACTORS.pressure[opts.pressureUnit];
    const inputPaths = [file, ...(opts.pressure ? [opts.pressure] : []), ...(opts.energy ? [opts.energy] : [])];
    refuseInputsInside(opts.out, inputPaths);

    // Workers (and a run whose partials are handed to a parent) only read frames: no output.
    const writesOutput = isMainThread && workerCapture() === null;
    let staged: StagedDirectory | null = null;
    if (writesOutput) staged = await (await import('../report/write.js')).stageDirectory(opts.out);
    try {
      const layoutSpec = (t: Topology) => speciesLayout(t, {});
      const store = storePass({ layout: layoutSpec, removeDrift: true, keepVelocities: true });
      const rdf = reportRdfPass({ rMax, binWidth, skipSameMolecule: false, blocks: null, method: 'auto' }, rules);
      const shellPasses = shells.map((s) => shellPass({ center: s.center, around: s.around, cutoff: s.cutoff, tolerance: 2 }));
      const passes: Pass[] = [overviewPass, framewiseObservables, store, rdf, ...shellPasses] as Pass[];
      const run = await runOnTrajectory(file, opts, passes, warnings);
      const ctx = run.ctx;
      const topology = ctx.topology;
      const skipped: Record<string, string> = {};
      const overview = overviewPass.finish(run.partials[0] as never, ctx) as OverviewResult;
      const framewise = framewiseObservables.finish(run.partials[1] as never, ctx) as FramewiseResult;
      const storeP = run.partials[2] as StorePartial;

      // Structure.
      let structure: ReportData['structure'] = null;
      const rdfOut = attempt('structure', skipped, () => rdf.finish(run.partials[3] as never, ctx));
      if (rdfOut && 'skipped' in rdfOut) skipped.structure = rdfOut.skipped;
      else if (rdfOut) structure = rdfOut;
      const shellResults: ReportData['shells'] = [];
      shellPasses.forEach((p, i) => {
        const r = attempt(`shell ${shells[i].text}`, skipped, () => p.finish(run.partials[4 + i] as never, ctx) as ShellResult);
        if (r) shellResults.push({ text: shells[i].text, result: r });
      });

      // Transport from the shared store.
      const charges = chargesFor(topology, rules);
      const labelCharges = new Map<string, number>();
      if (charges) {
        const byLabel = new Map<string, Set<number>>();
        topology.labels.forEach((l, i) => {
          if (!byLabel.has(l)) byLabel.set(l, new Set());
          byLabel.get(l)!.add(charges[i]);
        });
        for (const [l, set] of byLabel) if (set.size === 1) labelCharges.set(l, [...set][0]);
      }
      const layout = layoutSpec(topology);
      let msd: MsdResult | null = null;
      let vacf: VacfResult | null = null;
      let conductivity: ConductivityResult | null = null;
      const boxLength = storeP.volumeFrames > 0 ? yehHummerBoxLength(storeP) : null;
      if (boxLength && !storeP.allCubic) warnings.push(boxLength.note);
      if (ctx.frameInterval === null) {
        skipped.transport = 'the trajectory carries no frame times: give the time between frames with --frame-interval (e.g. 0.2ps) for diffusion and conductivity';
      } else {
        msd = attempt('msd', skipped, () => analyseMsd(storeP, layout, ctx, { nonGaussian: false }));
        if (velocitySourceOf(storeP) === 'file') vacf = attempt('vacf', skipped, () => analyseVacf(storeP, layout, ctx, {}));
        else {
          skipped.vacf = overview.hasVelocities
            ? 'some frames carry no velocities (the report does not estimate them from positions; `sojourn vacf` can)'
            : 'the file carries no velocities (the report does not estimate them from positions; `sojourn vacf` can)';
        }
        if (!charges) skipped.conductivity = 'no charges: give --charges (e.g. Na=+1,Cl=-1) or use a file with formal charges';
        else if (storeP.volumeFrames === 0) skipped.conductivity = 'the trajectory has no periodic cell, so no volume: give --box';
        else {
          const cl = chargeLayoutOnStore(layout, charges);
          if (cl.groups.length === 0) skipped.conductivity = 'every charge is zero';
          else {
            let shared: MsdResult | undefined;
            if (msd && cl.sameGroups) {
              const groups = cl.groups.map((g) => msd!.groups.find((m) => m.label === g.label));
              if (groups.every((g) => g !== undefined)) shared = { ...msd, groups: groups as MsdResult['groups'] };
            }
            conductivity = attempt('conductivity', skipped, () => analyseConductivity(storeP, cl, ctx, { temperature: temperatureK }, shared));
          }
        }
      }

      // Per-frame volume and density when the cell varies.
      const series: ReportData['series'] = [];
      if (overview.cellVaries && framewise.volume) {
        const vol = framewise.volume;
        const s1 = attempt('convergence of the cell volume', skipped, () => analyseSeries('cell volume', vol, { dt: ctx.frameInterval, unit: 'A^3' }));
        if (s1) series.push({ source: 'trajectory', report: s1, dt: ctx.frameInterval });
        let total = 0;
        for (let i = 0; i < topology.atoms; i++) total += topology.masses[i];
        if (Number.isFinite(total)) {
          const rho = vol.map((v) => massDensity(total, v));
          const s2 = attempt('convergence of the density', skipped, () => analyseSeries('mass density', rho, { dt: ctx.frameInterval, unit: 'g/cm^3' }));
          if (s2) series.push({ source: 'trajectory', report: s2, dt: ctx.frameInterval });
        }
      }

      // Tables.
      const inputs: InputRecord[] = [run.input];
      let viscosity: ReportData['viscosity'] = null;
      if (opts.pressure) {
        const table = await readTable(opts.pressure, { warnings });
        inputs.push({ path: opts.pressure, sha256: table.sha256, bytes: table.bytes, format: 'table', frames: table.rows });
        const dt = tableInterval(table, pressureInterval, '--pressure-interval');
        for (const [name, values] of table.columns) {
          if (values === table.time) continue;
          const r = attempt(`convergence of ${name} (pressure table)`, skipped, () => analyseSeries(name, values, { dt, unit: opts.pressureUnit }));
          if (r) series.push({ source: 'pressure table', report: r, dt });
        }
        const volumeA3 = overview.meanVolume?.value ?? null;
        if (dt === null) throw new UsageError(`${opts.pressure} has no time column: give --pressure-interval (e.g. 4fs)`);
        if (volumeA3 === null) skipped.viscosity = 'the trajectory has no periodic cell, so no volume for the Green–Kubo viscosity: give --box';
        else {
          if (overview.cellVaries) warnings.push(`the cell volume varies; the viscosity uses its mean (${volumeA3.toPrecision(7)} Å³)`);
          const map = pickStressColumns(table.names, opts.pressureColumns);
          const cols: StressColumns = {};
          for (const [k, name] of map) {
            const v = table.columns.get(name);
            if (!v) throw new UsageError(`${opts.pressure}: no column named '${name}'; available columns: ${table.names.join(', ')}`);
            cols[k] = v;
          }
          const analysis = attempt('viscosity', skipped, () =>
            analyseViscosity({ components: shearComponents(cols, false), dt, volumeA3, temperatureK, pascalPerUnit }),
          );
          if (analysis) {
            if (!analysis.result.converged) warnings.push(`viscosity not converged: ${analysis.result.reasons.join('; ')}`);
            viscosity = { result: analysis.result, volumeA3, pressureUnit: opts.pressureUnit, columns: Object.fromEntries(map) };
          }
        }
      }
      if (opts.energy) {
        const table = await readTable(opts.energy, { warnings });
        inputs.push({ path: opts.energy, sha256: table.sha256, bytes: table.bytes, format: 'table', frames: table.rows });
        const dt = tableInterval(table, energyInterval, '--energy-interval');
        for (const name of energyUnits.keys()) {
          if (!table.columns.has(name)) throw new UsageError(`--energy-units: ${opts.energy} has no column '${name}'; columns: ${table.names.join(', ')}`);
        }
        for (const [name, values] of table.columns) {
          if (values === table.time) continue;
          const r = attempt(`convergence of ${name} (energy table)`, skipped, () => analyseSeries(name, values, { dt, unit: energyUnits.get(name) ?? '' }));
          if (r) series.push({ source: 'energy table', report: r, dt });
        }
      }
      for (const [k, v] of Object.entries(skipped)) warnings.push(`${k} not computed: ${v}`);

      const inv = currentInvocation();
      const data: ReportData = {
        title: `sojourn report: ${path.basename(file)}`,
        version: VERSION,
        commandLine: ['sojourn', inv.command || 'report', ...inv.args],
        options: { ...opts },
        started,
        inputs,
        trajectoryPath: file,
        temperatureK,
        boundary: opts.boundary,
        overview,
        labelCharges,
        structure,
        shells: shellResults,
        msd,
        boxLength,
        vacf,
        conductivity,
        viscosity,
        series,
        skipped,
        warnings,
      };
      const { buildReport, renderTerminalSummary } = await import('../report/build.js');
      const built = buildReport(data, (performance.now() - t0) / 1000);
      if (staged) {
        for (const f of built.files) await staged.write(f.name, f.data);
        await staged.commit();
      }
      if (opts.json) process.stdout.write(toJson(built.document) + '\n');
      else {
        process.stdout.write(renderTerminalSummary(built.summary, path.join(opts.out, 'report.html'), warnings.length) + '\n');
        printWarnings(warnings, opts.quiet);
      }
    } catch (e) {
      if (staged) await staged.discard();
      throw e;
    }
  });
}
