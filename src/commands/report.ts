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
 *
 * With --max-memory and a store that would exceed it, the streaming passes run on the first read
 * only and the store holds one batch of atoms per read (src/engine/batches.ts): every read adds
 * its site sums of the MSD (per species, and per charge group when the conductivity splits a
 * species) and of the VACF; the first read also keeps the collective sums Σq r and Σq v per frame
 * for the conductivity. The analyses finish from the totals, as from one read.
 */
import type { RecipePass } from '../engine/recipes.js';
import type { CommandContext } from './common.js';
import * as path from 'node:path';
import { Option, type Command } from 'commander';
import { readTable, type TableData } from '../../readers/index.js';
import { overviewPass, massDensity, type OverviewResult } from '../../analyses/overview.js';
import { framewiseObservables, type FramewiseResult } from '../../analyses/framewise.js';
import { reportRdfPass } from '../../analyses/rdf-auto.js';
import { makePass } from '../../analyses/index.js';
import { shellPass, type ShellResult } from '../../analyses/shell.js';
import {
  addGroupSums,
  analyseMsd,
  finishMsd,
  msdPlan,
  msdSums,
  planeComponents,
  yehHummerBoxLength,
  type GroupSums,
  type MsdOptions,
  type MsdPlan,
  type MsdResult,
  type ReadInfo,
} from '../../analyses/msd.js';
import { chargesFor, parseChargeRules, type ChargeRule } from '../store/charges.js';
import { resolveLayout, speciesSpec, type LayoutSpec, type SpeciesLayoutSpec } from '../store/layout.js';
import type { SiteLayout } from '../store/sites.js';
import { storePass, type StorePartial } from '../store/store.js';
import {
  addVacfSums,
  analyseVacf,
  finishVacf,
  vacfPlan,
  vacfSums,
  velocityFrames,
  velocitySourceOf,
  type VacfGroupSums,
  type VacfPlan,
  type VacfResult,
} from '../../analyses/vacf.js';
import { analyseConductivity, type ConductivityResult } from '../../analyses/conductivity.js';
import { analyseViscosity, shearComponents, type StressColumns } from '../../analyses/viscosity.js';
import { analyseSeries } from '../../analyses/converge.js';
import { checkCellsAllow } from '../engine/cells.js';
import { addTrajectoryOptions, parsePositiveTime, printWarnings, readSpecOf, runOnTrajectory, type TrajectoryOptions, type TrajectoryRun } from './common.js';
import { groupSitesInBatch, planSiteBatches, readStoreInBatches, type BatchRequest, type SiteBatchPlan } from '../engine/batches.js';
import { commanderOption } from './analysis.js';
import { SHARED } from '../engine/options.js';
import { vacfStoreBytes } from '../../analyses/vacf-analysis.js';
import { uniformStep } from './converge.js';
import { pickStressColumns } from './viscosity.js';
import { parseQuantity, UNIT_FACTORS } from '../units.js';
import { AnalysisError, UsageError } from '../errors.js';
import { refuseOverwritingInputs, toJson, type FileUnit, type InputRecord } from '../output.js';
import { columnUnit, pressureUnitOf, tableInput } from '../tables.js';
import { printable } from '../printable.js';
import { VERSION } from '../version.js';
import type { Pass, PassContext } from '../types.js';
import type { Boundary } from '../transport.js';
import { chargeLayoutOnStore } from '../report/choose.js';
// The report writers (plots, HTML) are loaded only when a report is written, not in workers.
import type { ReportData } from '../report/build.js';
import type { StagedDirectory } from '../report/write.js';

interface ReportCliOptions extends TrajectoryOptions {
  maxMemory?: string;
  out: string;
  temperature: string;
  pressure?: string;
  energy?: string;
  charges?: string;
  pressureUnit?: string;
  tableTimeUnit?: string;
  pressureColumns?: string;
  pressureInterval?: string;
  energyInterval?: string;
  energyUnits?: string;
  boundary: Boundary;
  shell?: string[];
  rdfBinWidth: string;
  rdfRMax?: string;
}

/** What the report's batched reads read, under its --max-memory. */
function batchRequest(file: string, opts: ReportCliOptions, cc: CommandContext): BatchRequest {
  return { spec: readSpecOf(file, opts), maxMemory: opts.maxMemory, source: cc.source, partialOut: opts.partialOut !== undefined };
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
  const dt = uniformStep(table.time, table.path, table.timeQuantum);
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

/** The MSD options of the report (its species MSD and the conductivity's charge groups). */
const REPORT_MSD: MsdOptions = { nonGaussian: false };

/** How the report's transport analyses finish: from one stored read, or from batch sums. */
interface TransportFinishers {
  msd(): MsdResult;
  vacf(): VacfResult;
  /** The conductivity on the charge layout, given the species MSD when its groups are the same. */
  conductivity(cl: ReturnType<typeof chargeLayoutOnStore>, shared: MsdResult | undefined, temperatureK: number): ConductivityResult;
}

/** Finishers on a store holding every atom (one read). */
function storeFinishers(store: StorePartial, layout: SiteLayout, ctx: PassContext): TransportFinishers {
  return {
    msd: () => analyseMsd(store, layout, ctx, REPORT_MSD),
    vacf: () => analyseVacf(store, layout, ctx, {}),
    conductivity: (cl, shared, temperatureK) => analyseConductivity(store, cl, ctx, { temperature: temperatureK }, shared),
  };
}

/** Result of the report's batched reads: the first read (streaming passes) and the transport finishers. */
interface BatchedReport {
  first: TrajectoryRun;
  ctx: PassContext;
  info: StorePartial;
  finishers: TransportFinishers;
  note: string | null;
}

/**
 * The report's reads when the store does not fit: `streaming` passes on the first read only,
 * the store (every atom of `layoutSpec`, velocities when the file has them, drift removed) one
 * batch of atoms per read. Each read adds its MSD site sums (species groups, and the charge
 * groups when they differ from the species), and with velocities from the file its VACF site
 * sums; the first read keeps Σq r and Σq v per frame for the conductivity (`collectiveCharges`).
 * When the run has no frame times (no transport) the reading stops after the first read.
 */
async function batchedReport(
  file: string,
  opts: ReportCliOptions,
  cc: CommandContext,
  plan: SiteBatchPlan,
  layoutSpec: SpeciesLayoutSpec,
  rules: ChargeRule[] | null,
  streaming: Pass[],
  warnings: string[],
): Promise<BatchedReport> {
  const comps = planeComponents(undefined);
  let mplan: MsdPlan | null = null;
  let vplan: VacfPlan | null = null;
  let msdError: unknown = null;
  let vacfError: unknown = null;
  let msums: GroupSums[] | null = null;
  let vsums: VacfGroupSums[] | null = null;
  let clSums: GroupSums[] | null = null;
  let cl: ReturnType<typeof chargeLayoutOnStore> | null = null;
  // The store's sites carry the charges of `chargesFor` (0 without any), for Σq r and Σq v.
  const chargedLayout: LayoutSpec = { ...layoutSpec, charges: { rules } };
  const storeOptions = (_: Int32Array, i: number) => ({
    layout: chargedLayout,
    removeDrift: true,
    keepVelocities: true,
    ...(i === 0 ? { collectiveCharges: true } : {}),
  });
  const b = await readStoreInBatches(
    batchRequest(file, opts, cc),
    plan,
    storeOptions,
    warnings,
    (store, batch, run, i) => {
      const dt = run.ctx.frameInterval;
      if (dt === null) return false;
      const topology = run.ctx.topology;
      const layout = resolveLayout(layoutSpec, topology);
      if (i === 0) {
        // An AnalysisError here (too few frames) is reported when the analysis finishes.
        try {
          mplan = msdPlan(store.frames, dt, REPORT_MSD, true);
        } catch (e) {
          if (!(e instanceof AnalysisError)) throw e;
          msdError = e;
        }
        if (velocitySourceOf(store) === 'file') {
          try {
            vplan = vacfPlan(velocityFrames(store), {});
          } catch (e) {
            if (!(e instanceof AnalysisError)) throw e;
            vacfError = e;
          }
        }
        const charges = chargesFor(topology, rules);
        if (charges && store.volumeFrames > 0) {
          const c = chargeLayoutOnStore(layout, charges);
          if (c.groups.length > 0 && !c.sameGroups) cl = c;
        }
      }
      if (!mplan && !vplan) return false;
      const gs = groupSitesInBatch(layout, batch);
      if (mplan) {
        const m = msdSums(store, layout, mplan, comps, gs);
        msums = msums ? msums.map((x, k) => addGroupSums(x, m[k]!)) : m;
        if (cl) {
          const c = msdSums(store, cl, mplan, comps, groupSitesInBatch(cl, batch));
          clSums = clSums ? clSums.map((x, k) => addGroupSums(x, c[k]!)) : c;
        }
      }
      if (vplan) {
        const v = vacfSums(store, layout, vplan, comps, dt, gs);
        vsums = vsums ? vsums.map((x, k) => addVacfSums(x, v[k]!)) : v;
      }
      return true;
    },
    streaming,
  );
  const { ctx, info } = b;
  const layout = resolveLayout(layoutSpec, ctx.topology);
  const read: ReadInfo = { reads: b.reads, bytesHeld: b.bytesHeld, note: b.note };
  const need = <T>(x: T | null, error: unknown): T => {
    if (error) throw error;
    if (x === null) throw new Error('report: batch sums missing');
    return x;
  };
  const finishers: TransportFinishers = {
    msd: () => finishMsd(need(msums, msdError), mplan!, info, layout, ctx, REPORT_MSD, read),
    vacf: () => finishVacf(need(vsums, vacfError), vplan!, info, layout, ctx, {}, read),
    conductivity: (charged, shared, temperatureK) => {
      const m = shared ?? finishMsd(need(clSums, msdError), mplan!, info, charged, ctx, REPORT_MSD, read);
      return analyseConductivity(info, charged, ctx, { temperature: temperatureK }, m, read);
    },
  };
  // Stopped after the first read (no frame times, no transport): nothing was batched.
  return { first: b.first, ctx, info, finishers, note: b.reads === plan.batches.length ? b.note : null };
}

/** Register the command on the program (src/commands/index.ts). */
export function register(program: Command, cc: CommandContext): void {
  const cmd = program
    .command('report <trajectory>')
    .description('every applicable analysis from one read of the trajectory (plus pressure and energy tables), joined, written atomically to a directory: results.json, CSV, SVG, report.html')
    .requiredOption('--out <dir>', 'report directory to create (a previous sojourn report there is replaced; anything else is refused)')
    .requiredOption('--temperature <T>', 'temperature of the run, e.g. 300K')
    .option('--pressure <table>', 'pressure-tensor table (columns pxy, pxz, pyz[, pxx, pyy, pzz] and time): viscosity and column convergence')
    .option('--energy <table>', 'table of energies or other observables over time: convergence of every column')
    .option('--charges <list>', 'charges by selection, e.g. "Na=+1,Cl=-1" (default: the formal charges in the file, if any)')
    .addOption(new Option('--pressure-unit <unit>', 'unit of the pressure columns (default: the table\'s units line, else bar)').choices(Object.keys(UNIT_FACTORS.pressure)))
    .addOption(new Option('--table-time-unit <unit>', 'unit of the time column of --pressure and --energy when the tables do not say (default ps)').choices(Object.keys(UNIT_FACTORS.time)))
    .option('--pressure-columns <names>', 'pressure columns as xy,xz,yz or xy,xz,yz,xx,yy,zz (default: recognised by name)')
    .option('--pressure-interval <time>', 'time between pressure rows when the table has no time column, e.g. 4fs')
    .option('--energy-interval <time>', 'time between energy rows when the table has no time column')
    .option('--energy-units <pairs>', 'units of the energy-table columns, e.g. "potential=kJ/mol,temperature=K"')
    .addOption(new Option('--boundary <kind>', 'Stokes–Einstein boundary condition for hydrodynamic radii').choices(['stick', 'slip']).default('stick'))
    .option('--shell <centre:around:cutoff>', 'also count neighbours of CENTRE within CUTOFF and their residence time (2 ps tolerance; repeatable), e.g. "Na:Sv:3.4A"', collect)
    .option('--rdf-bin-width <length>', 'g(r) bin width', '0.05A')
    .option('--rdf-r-max <length>', 'largest g(r) distance (default: half the smallest cell width)');
  cmd.addOption(commanderOption(SHARED.maxMemory));
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
    const inputPaths = [file, ...(opts.pressure ? [opts.pressure] : []), ...(opts.energy ? [opts.energy] : [])];
    refuseInputsInside(opts.out, inputPaths);
    // The tables are read and checked before the trajectory, so that a bad table fails at once.
    const tableTimeUnit = opts.tableTimeUnit ? { timeUnit: { unit: opts.tableTimeUnit, option: '--table-time-unit' } } : {};
    let pressureTable: { table: TableData; dt: number; map: ReturnType<typeof pickStressColumns>; cols: StressColumns; unit: FileUnit } | null = null;
    if (opts.pressure) {
      const table = await readTable(opts.pressure, { warnings, ...tableTimeUnit });
      const dt = tableInterval(table, pressureInterval, '--pressure-interval');
      if (dt === null) throw new UsageError(`${opts.pressure} has no time column: give --pressure-interval (e.g. 4fs)`);
      const map = pickStressColumns(table.names, opts.pressureColumns);
      const cols: StressColumns = {};
      for (const [k, name] of map) {
        const v = table.columns.get(name);
        if (!v) throw new UsageError(`${opts.pressure}: no column named '${name}'; available columns: ${table.names.join(', ')}`);
        cols[k] = v;
      }
      pressureTable = { table, dt, map, cols, unit: pressureUnitOf(table, [...map.values()], opts.pressureUnit) };
    }
    let energyTable: { table: TableData; dt: number | null; units: Map<string, string> } | null = null;
    if (opts.energy) {
      const table = await readTable(opts.energy, { warnings, ...tableTimeUnit });
      const dt = tableInterval(table, energyInterval, '--energy-interval');
      for (const name of energyUnits.keys()) {
        if (!table.columns.has(name)) throw new UsageError(`--energy-units: ${opts.energy} has no column '${name}'; columns: ${table.names.join(', ')}`);
      }
      const units = new Map<string, string>();
      for (const name of table.columns.keys()) units.set(name, columnUnit(table, name, energyUnits.get(name), '--energy-units'));
      energyTable = { table, dt, units };
    }
    // A g(r) reach every frame's cell must allow is refused before the read (the default fits every frame).
    if (rMax !== null && cc.source.kind === 'read') await checkCellsAllow(readSpecOf(file, opts), rMax, '--rdf-r-max');
    // The store holds every atom: positions, and velocities when the file has them; per frame the
    // centre of mass, its velocity and (batched) the collective sums Σq r and Σq v, 4 × 24 B.
    const layoutSpec = speciesSpec({});
    const plan = await planSiteBatches(batchRequest(file, opts, cc), layoutSpec, vacfStoreBytes, vacfStoreBytes, 96);

    const staged: StagedDirectory | null = await (await import('../report/write.js')).stageDirectory(opts.out);
    try {
      // Every pass is built from its recipe (analyses/index.ts), so threads and merges rebuild it.
      const rdf = makePass<ReturnType<typeof reportRdfPass>>('rdf-auto', { spec: { rMax, binWidth, skipSameMolecule: false, blocks: null, method: 'auto' }, rules });
      const shellPasses = shells.map((s) => makePass<ReturnType<typeof shellPass>>('shell', { center: s.center, around: s.around, cutoff: s.cutoff, tolerance: 2 }));
      const overviewP = makePass<typeof overviewPass>('overview');
      const framewiseP = makePass<typeof framewiseObservables>('framewise');
      let run: TrajectoryRun;
      let ctx: PassContext;
      let storeP: StorePartial;
      // Partials of the streaming passes: overview, framewise, g(r), then the shells.
      let streamed: unknown[];
      let finishers: TransportFinishers;
      let memoryNote: string | null = null;
      if (plan) {
        const streaming = [overviewP, framewiseP, rdf, ...shellPasses] as RecipePass[];
        const b = await batchedReport(file, opts, cc, plan, layoutSpec, rules, streaming, warnings);
        run = b.first;
        ctx = b.ctx;
        storeP = b.info;
        streamed = run.partials.slice(1);
        finishers = b.finishers;
        memoryNote = b.note;
      } else {
        const store = makePass('store', { layout: layoutSpec, removeDrift: true, keepVelocities: true });
        const passes: RecipePass[] = [overviewP, framewiseP, store, rdf, ...shellPasses] as RecipePass[];
        run = await runOnTrajectory(file, opts, passes, warnings, cc);
        ctx = run.ctx;
        storeP = run.partials[2] as StorePartial;
        streamed = [run.partials[0], run.partials[1], ...run.partials.slice(3)];
        finishers = storeFinishers(storeP, resolveLayout(layoutSpec, ctx.topology), ctx);
      }
      const topology = ctx.topology;
      const skipped: Record<string, string> = {};
      const overview = overviewP.finish(streamed[0] as never, ctx);
      const framewise = framewiseP.finish(streamed[1] as never, ctx);

      // Structure.
      let structure: ReportData['structure'] = null;
      const rdfOut = attempt('structure', skipped, () => rdf.finish(streamed[2] as never, ctx));
      if (rdfOut && 'skipped' in rdfOut) skipped.structure = rdfOut.skipped;
      else if (rdfOut) structure = rdfOut;
      const shellResults: ReportData['shells'] = [];
      shellPasses.forEach((p, i) => {
        const r = attempt(`shell ${shells[i].text}`, skipped, () => p.finish(streamed[3 + i] as never, ctx));
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
      const layout = resolveLayout(layoutSpec, topology);
      let msd: MsdResult | null = null;
      let vacf: VacfResult | null = null;
      let conductivity: ConductivityResult | null = null;
      const boxLength = storeP.volumeFrames > 0 ? yehHummerBoxLength(storeP) : null;
      if (boxLength && !storeP.allCubic) warnings.push(boxLength.note);
      if (ctx.frameInterval === null) {
        skipped.transport = 'the trajectory carries no frame times: give the time between frames with --frame-interval (e.g. 0.2ps) for diffusion and conductivity';
      } else {
        msd = attempt('msd', skipped, () => finishers.msd());
        if (velocitySourceOf(storeP) === 'file') vacf = attempt('vacf', skipped, () => finishers.vacf());
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
              if (groups.every((g): g is MsdResult['groups'][number] => g !== undefined)) shared = { ...msd, groups };
            }
            conductivity = attempt('conductivity', skipped, () => finishers.conductivity(cl, shared, temperatureK));
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
      if (pressureTable) {
        const { table, dt, map, cols, unit } = pressureTable;
        const pascalPerUnit = UNIT_FACTORS.pressure[unit.unit]!;
        inputs.push(tableInput(table, { pressure: unit }));
        for (const [name, values] of table.columns) {
          if (values === table.time) continue;
          const u = [...map.values()].includes(name) ? unit.unit : columnUnit(table, name, undefined, '--pressure-unit');
          const r = attempt(`convergence of ${name} (pressure table)`, skipped, () => analyseSeries(name, values, { dt, unit: u }));
          if (r) series.push({ source: 'pressure table', report: r, dt });
        }
        const volumeA3 = overview.meanVolume?.value ?? null;
        if (volumeA3 === null) skipped.viscosity = 'the trajectory has no periodic cell, so no volume for the Green–Kubo viscosity: give --box';
        else {
          if (overview.cellVaries) warnings.push(`${file}: the cell volume varies; the viscosity uses its mean (${volumeA3.toPrecision(7)} Å³)`);
          const analysis = attempt('viscosity', skipped, () =>
            analyseViscosity({ components: shearComponents(cols, false), dt, volumeA3, temperatureK, pascalPerUnit }),
          );
          if (analysis) {
            if (!analysis.result.converged) warnings.push(`viscosity not converged: ${analysis.result.reasons.join('; ')}`);
            viscosity = { result: analysis.result, volumeA3, pressureUnit: unit.unit, columns: Object.fromEntries(map) };
          }
        }
      }
      if (energyTable) {
        const { table, dt, units } = energyTable;
        const given = [...units].filter(([n, u]) => u !== '' && table.columns.get(n) !== table.time);
        inputs.push(tableInput(table, Object.fromEntries(given.map(([n, u]) => [n, { unit: u, from: energyUnits.has(n) ? '--energy-units' : 'file' }]))));
        for (const [name, values] of table.columns) {
          if (values === table.time) continue;
          const r = attempt(`convergence of ${name} (energy table)`, skipped, () => analyseSeries(name, values, { dt, unit: units.get(name) ?? '' }));
          if (r) series.push({ source: 'energy table', report: r, dt });
        }
      }
      for (const [k, v] of Object.entries(skipped)) warnings.push(`${k} not computed: ${v}`);

      const data: ReportData = {
        title: `sojourn report: ${path.basename(file)}`,
        version: VERSION,
        commandLine: ['sojourn', ...(cc.args.length > 0 ? cc.args : ['report'])],
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
        process.stdout.write(printable(renderTerminalSummary(built.summary, path.join(opts.out, 'report.html'), warnings.length)) + '\n');
        if (memoryNote) process.stdout.write(`memory: ${memoryNote}\n`);
        printWarnings(warnings, opts.quiet);
      }
    } catch (e) {
      if (staged) await staged.discard();
      throw e;
    }
  });
}
