/**
 * Overview pass for `sojourn inspect`: frame count, atoms, species, the cell and whether it
 * varies, velocities, times, number density and mass density.
 */
import type { Frame, Pass, PassContext, Quantity } from '../src/types.js';
import { quantity } from '../src/types.js';
import { cellParameters, volume, sameCell } from '../src/cell.js';
import { speciesCounts } from '../src/selection.js';
import { AVOGADRO } from '../src/units.js';
import { atomKinds, checkMassesUsed, type AtomKind } from '../src/masses.js';
import { kineticTemperature } from '../src/checks.js';

/** Partial state: counts and the cell/volume statistics of a frame range. */
export interface OverviewPartial {
  frames: number;
  firstCell: number[] | null;
  cellVaries: boolean;
  volumeSum: number;
  volumeSumSq: number;
  cellFrames: number;
  hasVelocities: boolean;
  firstTime: number | null;
  lastTime: number | null;
  /** Σ over frames with velocities of the frame's kinetic temperature (K), and those frames. */
  kineticSum: number;
  kineticFrames: number;
}

export interface OverviewResult {
  frames: number;
  atoms: number;
  species: Record<string, number>;
  cell: { lengths: number[]; angles: number[]; volume: number } | null;
  cellVaries: boolean;
  meanVolume: Quantity | null;
  hasVelocities: boolean;
  timeSpan: Quantity | null;
  frameInterval: Quantity | null;
  numberDensity: Quantity | null;
  massDensity: Quantity | null;
  /** Per atom label: the element and mass used and where they came from. */
  atomKinds: AtomKind[];
  /** Mean kinetic (equipartition) temperature of the frames, from velocities and masses; null without velocities. */
  kineticTemperature: Quantity | null;
}

/**
 * Mass density ρ = Σm / (N_A V) in g/cm³, with Σm in g/mol and V in Å³ (1 Å³ = 1e-24 cm³).
 */
export function massDensity(totalMassGPerMol: number, volumeA3: number): number {
  return totalMassGPerMol / AVOGADRO / (volumeA3 * 1e-24);
}

export const overviewPass: Pass<OverviewPartial, OverviewResult> = {
  name: 'overview',
  create(ctx: PassContext) {
    // The overview states the mass density and the kinetic temperature: both need the masses.
    checkMassesUsed(ctx.topology, ctx.file ?? '<input>', ctx.warnings, 'the mass density and kinetic temperature');
    const masses = ctx.topology.masses;
    const p: OverviewPartial = {
      frames: 0, firstCell: null, cellVaries: false, volumeSum: 0, volumeSumSq: 0, cellFrames: 0,
      hasVelocities: false, firstTime: null, lastTime: null, kineticSum: 0, kineticFrames: 0,
    };
    let first: Float64Array | null = null;
    return {
      frame(f: Frame) {
        p.frames++;
        if (f.velocities) {
          p.hasVelocities = true;
          const t = kineticTemperature(f.velocities, masses);
          if (Number.isFinite(t)) {
            p.kineticSum += t;
            p.kineticFrames++;
          }
        }
        if (f.time !== null) {
          if (p.firstTime === null) p.firstTime = f.time;
          p.lastTime = f.time;
        }
        if (f.cell) {
          if (!first) {
            first = Float64Array.from(f.cell);
            p.firstCell = Array.from(first);
          } else if (!p.cellVaries && !sameCell(first, f.cell)) p.cellVaries = true;
          const v = volume(f.cell);
          p.volumeSum += v;
          p.volumeSumSq += v * v;
          p.cellFrames++;
        }
      },
      partial: () => p,
    };
  },
  merge(a, b) {
    const varies =
      a.cellVaries || b.cellVaries ||
      (a.firstCell !== null && b.firstCell !== null && !sameCell(Float64Array.from(a.firstCell), Float64Array.from(b.firstCell)));
    return {
      frames: a.frames + b.frames,
      firstCell: a.firstCell ?? b.firstCell,
      cellVaries: varies,
      volumeSum: a.volumeSum + b.volumeSum,
      volumeSumSq: a.volumeSumSq + b.volumeSumSq,
      cellFrames: a.cellFrames + b.cellFrames,
      hasVelocities: a.hasVelocities || b.hasVelocities,
      firstTime: a.firstTime ?? b.firstTime,
      lastTime: b.lastTime ?? a.lastTime,
      kineticSum: a.kineticSum + b.kineticSum,
      kineticFrames: a.kineticFrames + b.kineticFrames,
    };
  },
  finish(p, ctx: PassContext): OverviewResult {
    const topo = ctx.topology;
    let cell: OverviewResult['cell'] = null;
    let meanVolume: Quantity | null = null;
    let numberDensity: Quantity | null = null;
    let mass: Quantity | null = null;
    if (p.firstCell) {
      const h = Float64Array.from(p.firstCell);
      const par = cellParameters(h);
      cell = { lengths: par.lengths, angles: par.angles, volume: volume(h) };
      const mv = p.volumeSum / p.cellFrames;
      const sd = p.cellFrames > 1 ? Math.sqrt(Math.max(0, (p.volumeSumSq - p.cellFrames * mv * mv) / (p.cellFrames - 1))) : 0;
      // The spread of the volume is reported (not a standard error): inspect does no correlation analysis.
      meanVolume = quantity(mv, p.cellVaries ? sd : null, 'A^3');
      numberDensity = quantity(topo.atoms / mv, null, '1/A^3');
      let total = 0;
      for (let i = 0; i < topo.atoms; i++) total += topo.masses[i];
      mass = Number.isFinite(total) ? quantity(massDensity(total, mv), null, 'g/cm^3') : null;
    }
    const span = p.firstTime !== null && p.lastTime !== null ? p.lastTime - p.firstTime : null;
    return {
      frames: p.frames,
      atoms: topo.atoms,
      species: Object.fromEntries(speciesCounts(topo)),
      cell,
      cellVaries: p.cellVaries,
      meanVolume,
      hasVelocities: p.hasVelocities,
      timeSpan: span !== null ? quantity(span, null, 'ps') : null,
      frameInterval: ctx.frameInterval !== null ? quantity(ctx.frameInterval, null, 'ps') : null,
      numberDensity,
      massDensity: mass,
      atomKinds: atomKinds(topo),
      kineticTemperature: p.kineticFrames > 0 ? quantity(p.kineticSum / p.kineticFrames, null, 'K') : null,
    };
  },
};
