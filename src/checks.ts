/**
 * Plausibility checks made on every read of a trajectory, so that a unit mix-up shows instead of
 * a silently wrong number. A pass (`checksPass`, appended to every read by src/engine/execute.ts)
 * gathers, over the frames:
 *
 * - the kinetic (equipartition) temperature from the velocities and masses;
 * - the displacement of atoms between consecutive frames against what their velocities allow
 *   over the time between frames (a sample of up to 1024 atoms);
 * - the cell volume (for the mass density), how far the first frame's coordinates spread beyond
 *   the cell, coordinates so far outside the cell that no position can be recovered (an error at
 *   once), and atoms closer than 0.5 Å (in every 64th frame by index, more rarely for big systems).
 *
 * `judgeChecks` turns the totals into warnings, or into a usage error where the number a command
 * would print is meaningless (a kinetic temperature off by orders of magnitude, atoms moving far
 * more than their velocities allow), naming the likely unit. Partials merge exactly like one read:
 * the pair of frames that straddles two threads' shares is added in `merge`.
 */
import { BOLTZMANN, GRAM_PER_MOL, AVOGADRO, UNIT_FACTORS } from './units.js';
import { CellGeometry, inverse, perpendicularWidths, volume } from './cell.js';
import { InputError, UsageError } from './errors.js';
import type { Frame, Pass, PassContext, Topology, Warnings } from './types.js';
import { closeEvery, closestPairWithin } from './close-pairs.js';
export { closeEvery, closestPairWithin } from './close-pairs.js';

/** Atoms whose displacement between frames is compared with their velocities. */
const SAMPLE_ATOMS = 1024;
/** Distance below which two atoms count as overlapping (Å); the shortest bond, H–H in H₂, is 0.74 Å. */
export const CLOSE_DISTANCE = 0.5;
/** A coordinate farther than this many cell lengths from the origin is an error (no position can be recovered). */
export const FAR_CELLS = 1e4;
/** Without a cell: a coordinate beyond this (Å, 1 cm) is an error. */
export const FAR_NO_CELL = 1e8;

/**
 * Kinetic temperature of one frame by equipartition: T = Σ mᵢ|vᵢ|² / (3 N k_B), over the N atoms
 * with a known positive mass (3 degrees of freedom each; constraints and the centre-of-mass
 * motion are not subtracted). m in g/mol (× 10⁻³/N_A kg), v in Å/ps (× 100 m/s); k_B from
 * CODATA 2018. Source: the equipartition theorem, ⟨½ m v_x²⟩ = ½ k_B T (e.g. Allen & Tildesley,
 * Computer Simulation of Liquids, 2nd ed. 2017, §2.4). NaN when no atom has a mass.
 */
export function kineticTemperature(velocities: Float64Array, masses: Float64Array): number {
  let sum = 0;
  let n = 0;
  for (let i = 0; i < masses.length; i++) {
    const m = masses[i]!;
    if (!(m > 0) || !Number.isFinite(m)) continue;
    const vx = velocities[3 * i]!, vy = velocities[3 * i + 1]!, vz = velocities[3 * i + 2]!;
    sum += m * (vx * vx + vy * vy + vz * vz);
    n++;
  }
  if (n === 0) return NaN;
  return (sum * GRAM_PER_MOL * 1e4) / (3 * n * BOLTZMANN);
}

/**
 * Mass density ρ = Σm / (N_A V) in g/cm³, with Σm in g/mol and V in Å³ (1 Å³ = 10⁻²⁴ cm³);
 * N_A from CODATA 2018.
 */
export function massDensityOf(totalMassGPerMol: number, volumeA3: number): number {
  return totalMassGPerMol / AVOGADRO / (volumeA3 * 1e-24);
}

/** A frame kept at the edge of a share: index, time and the sample's positions and velocities. */
interface Edge {
  index: number;
  time: number | null;
  pos: Float64Array;
  vel: Float64Array | null;
  cell: Float64Array | null;
}

/** The checks' totals over a range of frames (plain data; merges like one read). */
export interface ChecksPartial {
  frames: number;
  /** Frames with times, and with velocities (seen, whatever the masses). */
  timedFrames: number;
  velocityFramesSeen: number;
  velocityFrames: number;
  /** Σ over frames with velocities of the frame's kinetic temperature (K). */
  kineticSum: number;
  volumeSum: number;
  volumeFrames: number;
  /** Consecutive frame pairs compared; Σ|Δr|²; Σ|v̄Δt|² (times known); Σ|v̄|² (times unknown). */
  pairs: number;
  dispSq: number;
  velSqTimed: number;
  velSqUntimed: number;
  head: Edge | null;
  tail: Edge | null;
  /** The first frame's spread beyond its cell (cell widths along the worst axis), when it has a cell. */
  spread: { index: number; line: number; axis: number; extent: number; width: number } | null;
  closeChecked: number;
  closeFrames: number;
  close: { index: number; a: number; b: number; r: number } | null;
}

/** What the checks found, for the verdicts and the output. */
export interface ChecksResult {
  frames: number;
  timedFrames: number;
  velocityFramesSeen: number;
  /** Mean kinetic temperature over the frames (K), or null without velocities or masses. */
  kineticTemperature: number | null;
  /** RMS displacement between consecutive frames over RMS v̄·Δt, or null when not measurable. */
  displacementRatio: number | null;
  pairs: number;
  /** Mass density (g/cm³) over the mean cell volume, or null (no cell, or a mass unknown). */
  massDensity: number | null;
  spread: ChecksPartial['spread'];
  closeChecked: number;
  closeFrames: number;
  close: { index: number; labelA: string; labelB: string; a: number; b: number; r: number } | null;
}

function copyEdge(f: Frame, sample: number, into: Edge | null): Edge {
  const e: Edge = into ?? { index: 0, time: null, pos: new Float64Array(3 * sample), vel: null, cell: null };
  e.index = f.index;
  e.time = f.time;
  e.pos.set(f.positions.subarray(0, 3 * sample));
  if (f.velocities) {
    e.vel ??= new Float64Array(3 * sample);
    e.vel.set(f.velocities.subarray(0, 3 * sample));
  } else e.vel = null;
  if (f.cell) {
    e.cell ??= new Float64Array(9);
    e.cell.set(f.cell);
  } else e.cell = null;
  return e;
}

/** Add the pair (a, b) of consecutive frames to the displacement sums. */
function addPair(p: ChecksPartial, a: Edge, b: Edge): void {
  if (!a.vel || !b.vel) return;
  const g = b.cell ? new CellGeometry(b.cell) : null;
  const dt = a.time !== null && b.time !== null ? b.time - a.time : null;
  const d = new Float64Array(3);
  let disp = 0;
  let vel = 0;
  const n = a.pos.length;
  for (let k = 0; k < n; k += 3) {
    d[0] = b.pos[k]! - a.pos[k]!;
    d[1] = b.pos[k + 1]! - a.pos[k + 1]!;
    d[2] = b.pos[k + 2]! - a.pos[k + 2]!;
    if (g) g.minimumImage(d, 0);
    disp += d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
    const vx = 0.5 * (a.vel[k]! + b.vel[k]!), vy = 0.5 * (a.vel[k + 1]! + b.vel[k + 1]!), vz = 0.5 * (a.vel[k + 2]! + b.vel[k + 2]!);
    vel += vx * vx + vy * vy + vz * vz;
  }
  p.pairs++;
  p.dispSq += disp;
  if (dt !== null) p.velSqTimed += vel * dt * dt;
  else p.velSqUntimed += vel;
}

/** Throw when a coordinate of frame f lies so far out that no position can be recovered from it. */
function checkFarCoordinates(f: Frame, file: string, topo: Topology): void {
  let bound = FAR_NO_CELL;
  let what = `${FAR_NO_CELL} Å from the origin`;
  if (f.cell) {
    const h = f.cell;
    const len = Math.max(Math.hypot(h[0]!, h[1]!, h[2]!), Math.hypot(h[3]!, h[4]!, h[5]!), Math.hypot(h[6]!, h[7]!, h[8]!));
    bound = FAR_CELLS * len;
    what = `10⁴ cell lengths from the cell`;
  }
  const p = f.positions;
  for (let k = 0; k < p.length; k++) {
    if (Math.abs(p[k]!) > bound) {
      const i = Math.floor(k / 3);
      throw new InputError(
        file,
        f.line,
        null,
        `frame ${f.index + 1}: atom ${i + 1} ('${topo.labels[i]}') has ${'xyz'[k % 3]} = ${p[k]} Å, more than ${what}: no position inside the cell can be recovered from it (a corrupt frame, or coordinates in another unit)`,
      );
    }
  }
}

/** How far the frame's coordinates spread along the cell vectors, in cell widths: the worst axis. */
function spreadOf(f: Frame): ChecksPartial['spread'] {
  if (!f.cell) return null;
  const inv = inverse(f.cell);
  const w = perpendicularWidths(f.cell);
  let worst: ChecksPartial['spread'] = null;
  for (let k = 0; k < 3; k++) {
    let lo = Infinity;
    let hi = -Infinity;
    const p = f.positions;
    for (let o = 0; o < p.length; o += 3) {
      const s = p[o]! * inv[k]! + p[o + 1]! * inv[3 + k]! + p[o + 2]! * inv[6 + k]!;
      if (s < lo) lo = s;
      if (s > hi) hi = s;
    }
    const extent = (hi - lo) * w[k]!;
    if (worst === null || extent / w[k]! > worst.extent / worst.width) worst = { index: f.index, line: f.line, axis: k, extent, width: w[k]! };
  }
  return worst;
}

/** A fresh partial. */
function emptyPartial(): ChecksPartial {
  return {
    frames: 0, timedFrames: 0, velocityFramesSeen: 0, velocityFrames: 0, kineticSum: 0, volumeSum: 0, volumeFrames: 0,
    pairs: 0, dispSq: 0, velSqTimed: 0, velSqUntimed: 0, head: null, tail: null,
    spread: null, closeChecked: 0, closeFrames: 0, close: null,
  };
}

/** The checks as a pass (see the module comment); its result is `ChecksResult`. */
export const checksPass: Pass<ChecksPartial, ChecksResult> = {
  name: 'checks',
  create(ctx: PassContext) {
    const topo = ctx.topology;
    const file = ctx.file ?? '<input>';
    const p = emptyPartial();
    const sample = Math.min(topo.atoms, SAMPLE_ATOMS);
    const every = closeEvery(topo.atoms);
    const include = Uint8Array.from(topo.elements, (e) => (e === 'X' ? 0 : 1));
    let spare: Edge | null = null;
    return {
      frame(f: Frame) {
        checkFarCoordinates(f, file, topo);
        if (p.frames === 0) p.spread = spreadOf(f);
        p.frames++;
        if (f.time !== null) p.timedFrames++;
        if (f.velocities) p.velocityFramesSeen++;
        if (f.velocities) {
          const t = kineticTemperature(f.velocities, topo.masses);
          if (Number.isFinite(t)) {
            p.kineticSum += t;
            p.velocityFrames++;
          }
        }
        if (f.cell) {
          p.volumeSum += volume(f.cell);
          p.volumeFrames++;
        }
        const prev = p.tail;
        const e = copyEdge(f, sample, spare);
        if (prev) addPair(p, prev, e);
        if (p.head === null) p.head = copyEdge(f, sample, null);
        // Two buffers alternate as the tail (the head has its own copy).
        spare = prev === p.head ? null : prev;
        p.tail = e;
        if (f.index % every === 0) {
          p.closeChecked++;
          const c = closestPairWithin(f.positions, include, f.cell, CLOSE_DISTANCE);
          if (c) {
            p.closeFrames++;
            if (p.close === null) p.close = { index: f.index, a: c.a, b: c.b, r: c.r };
          }
        }
      },
      partial: () => p,
    };
  },
  merge(a, b) {
    const out: ChecksPartial = {
      frames: a.frames + b.frames,
      timedFrames: a.timedFrames + b.timedFrames,
      velocityFramesSeen: a.velocityFramesSeen + b.velocityFramesSeen,
      velocityFrames: a.velocityFrames + b.velocityFrames,
      kineticSum: a.kineticSum + b.kineticSum,
      volumeSum: a.volumeSum + b.volumeSum,
      volumeFrames: a.volumeFrames + b.volumeFrames,
      pairs: a.pairs + b.pairs,
      dispSq: a.dispSq + b.dispSq,
      velSqTimed: a.velSqTimed + b.velSqTimed,
      velSqUntimed: a.velSqUntimed + b.velSqUntimed,
      head: a.head ?? b.head,
      tail: b.tail ?? a.tail,
      spread: a.frames > 0 ? a.spread : b.spread,
      closeChecked: a.closeChecked + b.closeChecked,
      closeFrames: a.closeFrames + b.closeFrames,
      close: a.close ?? b.close,
    };
    // The frames on either side of the cut are consecutive frames of the run.
    if (a.tail && b.head) addPair(out, a.tail, b.head);
    return out;
  },
  finish(p, ctx): ChecksResult {
    const topo = ctx.topology;
    let untimed = p.velSqUntimed;
    if (untimed > 0) untimed = ctx.frameInterval !== null ? untimed * ctx.frameInterval * ctx.frameInterval : NaN;
    const expected = p.velSqTimed + untimed;
    let total = 0;
    for (let i = 0; i < topo.atoms; i++) total += topo.masses[i]!;
    const density = p.volumeFrames > 0 && Number.isFinite(total) && total > 0 ? massDensityOf(total, p.volumeSum / p.volumeFrames) : null;
    return {
      frames: p.frames,
      timedFrames: p.timedFrames,
      velocityFramesSeen: p.velocityFramesSeen,
      kineticTemperature: p.velocityFrames > 0 ? p.kineticSum / p.velocityFrames : null,
      displacementRatio: p.pairs > 0 && expected > 0 && Number.isFinite(expected) ? Math.sqrt(p.dispSq / expected) : null,
      pairs: p.pairs,
      massDensity: density,
      spread: p.spread,
      closeChecked: p.closeChecked,
      closeFrames: p.closeFrames,
      close: p.close ? { ...p.close, labelA: topo.labels[p.close.a]!, labelB: topo.labels[p.close.b]! } : null,
    };
  },
};

/** What the verdicts need besides the checks' result. */
export interface CheckSettings {
  /** The input's name for messages. */
  file: string;
  /** --temperature of the command (K), or null. */
  temperature: number | null;
  /** The file's time unit and whether the user gave it (--time-unit). */
  timeUnit: string;
  timeUnitGiven: boolean;
  /** The velocity unit and whether the user gave it (--velocity-unit). */
  velocityUnit: string;
  velocityUnitGiven: boolean;
  /** True when the frame interval comes from --frame-interval (the file has no times). */
  intervalFromOption: boolean;
}

/** Three significant figures without binary noise; powers of ten for very small or large values ("1.25e-6"). */
function sig(x: number): string {
  const v = Number(x.toPrecision(3));
  return v !== 0 && (Math.abs(v) < 1e-3 || Math.abs(v) >= 1e6) ? v.toExponential() : String(v);
}

/** Velocity units whose factor makes `tKin` (computed in `current`) closest to `target`, within a factor 3; null if none. */
function likelyVelocityUnit(tKin: number, target: number, current: string): string | null {
  const f0 = UNIT_FACTORS.velocity[current]!;
  let best: { unit: string; off: number } | null = null;
  for (const unit of ['A/ps', 'A/fs', 'nm/ps', 'm/s']) {
    const f = UNIT_FACTORS.velocity[unit]!;
    const t = tKin * (f / f0) ** 2;
    const off = Math.abs(Math.log(t / target));
    if (off < Math.log(3) && (best === null || off < best.off)) best = { unit, off };
  }
  return best && best.unit !== current && !(UNIT_FACTORS.velocity[best.unit] === f0) ? best.unit : null;
}

/** Below this a --temperature is suspicious (a reduced temperature read as kelvin), K. */
export const LOW_TEMPERATURE = 10;

/** The warning for a --temperature below 10 K (likely a reduced temperature), or null. */
export function lowTemperatureWarning(temperatureK: number): string | null {
  if (!(temperatureK < LOW_TEMPERATURE)) return null;
  return `--temperature ${sig(temperatureK)} K is below ${LOW_TEMPERATURE} K: it is taken in kelvin; if it is a reduced (Lennard-Jones) temperature T*, give T = T*·ε/k_B in K instead`;
}

/**
 * Turn the checks' result into warnings, or a usage error where a number would be meaningless:
 *
 * - kinetic temperature against --temperature: off by more than 30× either way is an error
 *   naming the velocity unit that would fit; by more than 2× a warning (constraints lower the
 *   3N-degree-of-freedom estimate by up to a third, e.g. rigid water 6/9; common practice, no
 *   source); without --temperature, a kinetic temperature outside 1–10⁵ K is a warning;
 * - without velocities, a --temperature below 10 K is a warning (a reduced temperature?);
 * - RMS displacement between frames over RMS v̄Δt (≈ 1 for short Δt, less for long Δt or a
 *   solid; it cannot much exceed 1): above 30 an error naming the likely time or velocity unit,
 *   below 1/300 a warning (times in fs read as ps?);
 * - mass density outside 0.01–25 g/cm³ (dilute gases to the densest solids, osmium 22.6;
 *   CRC Handbook of Chemistry and Physics, from memory): a warning;
 * - the first frame spreading over more than 1.5 cell widths: a warning (cell and coordinates
 *   in different units?);
 * - atoms closer than 0.5 Å in more than half the frames checked: a warning.
 *
 * Units the user states explicitly are believed: with --velocity-unit (and --time-unit, or a
 * --frame-interval) the two errors above become warnings (e.g. frames that are not consecutive
 * snapshots of one run).
 */
export function judgeChecks(r: ChecksResult, s: CheckSettings, warnings: Warnings): void {
  const add = (w: string) => {
    if (!warnings.includes(w)) warnings.push(w);
  };
  const file = s.file;
  const tk = r.kineticTemperature;
  // Is the kinetic temperature plausible (so that the velocities' unit is right)?
  let velocitiesPlausible: boolean | null = null;
  let velocityHint: string | null = null;
  if (tk !== null && tk > 0) {
    const target = s.temperature ?? 300;
    const ratio = tk / target;
    if (s.temperature !== null) {
      velocitiesPlausible = ratio >= 1 / 30 && ratio <= 30;
      velocityHint = likelyVelocityUnit(tk, s.temperature, s.velocityUnit);
      // Units the user stated explicitly are believed: the mismatch is then a warning.
      if (!velocitiesPlausible && s.velocityUnitGiven) {
        add(`${file}: the kinetic temperature from the velocities (in ${s.velocityUnit}, as given) and masses is ${sig(tk)} K, ${sig(ratio >= 1 ? ratio : 1 / ratio)} times ${ratio >= 1 ? 'above' : 'below'} --temperature ${sig(s.temperature)} K`);
      } else if (!velocitiesPlausible) {
        const lowT = s.temperature < LOW_TEMPERATURE && tk >= LOW_TEMPERATURE && tk < 1e4;
        throw new UsageError(
          `${file}: the kinetic temperature from the velocities and masses is ${sig(tk)} K, ${sig(ratio >= 1 ? ratio : 1 / ratio)} times ${ratio >= 1 ? 'above' : 'below'} --temperature ${sig(s.temperature)} K: ` +
            (velocityHint
              ? `the velocities are probably in ${velocityHint}, not ${s.velocityUnit}${s.velocityUnitGiven ? '' : ' (the unit sojourn assumes)'}: give --velocity-unit ${velocityHint}`
              : lowT
                ? `--temperature looks like a reduced temperature; give it in kelvin`
                : `the velocities (taken in ${s.velocityUnit}), the masses or --temperature are not in the units sojourn reads (--velocity-unit, --masses in g/mol, --temperature in K)`) +
            ' (if the velocities are in the unit assumed, say so with --velocity-unit: the mismatch is then a warning)',
        );
      }
      if (velocitiesPlausible && (ratio < 0.5 || ratio > 2)) {
        add(
          `${file}: the kinetic temperature from the velocities and masses is ${sig(tk)} K, but --temperature is ${sig(s.temperature)} K (constrained bonds lower the estimate by up to a third; a larger difference suggests wrong velocity units (taken in ${s.velocityUnit}) or masses)`,
        );
      }
    } else {
      velocitiesPlausible = tk >= 1 && tk <= 1e5;
      if (!velocitiesPlausible) {
        velocityHint = likelyVelocityUnit(tk, 300, s.velocityUnit);
        add(
          `${file}: the kinetic temperature from the velocities and masses is ${sig(tk)} K, not that of a liquid: ${velocityHint ? `are the velocities in ${velocityHint} (--velocity-unit ${velocityHint})? They are taken in ${s.velocityUnit}` : `check the velocity unit (taken in ${s.velocityUnit}) and the masses`}`,
        );
      }
    }
  } else if (s.temperature !== null) {
    const w = lowTemperatureWarning(s.temperature);
    if (w) add(w);
  }
  const q = r.displacementRatio;
  if (q !== null) {
    const timeFix = s.intervalFromOption
      ? 'the time between frames given with --frame-interval is too short'
      : `the frame times are probably in ${s.timeUnit === 'fs' ? 'ps' : 'ns'}, not ${s.timeUnit}${s.timeUnitGiven ? '' : ' (the unit sojourn assumes)'}: give --time-unit ${s.timeUnit === 'fs' ? 'ps' : 'ns'}`;
    // Both units stated explicitly (or the interval given): believed, the mismatch is a warning.
    const stated = s.velocityUnitGiven && (s.timeUnitGiven || s.intervalFromOption);
    if (q > 30 && stated) {
      add(`${file}: between consecutive frames the atoms move ${sig(q)} times farther than their velocities (in ${s.velocityUnit}) allow in the time between frames (${s.intervalFromOption ? '--frame-interval' : `times in ${s.timeUnit}`}): are the frames consecutive snapshots of one run?`);
    } else if (q > 30) {
      const velocityFix = velocityHint ?? (s.velocityUnit === 'A/fs' || s.velocityUnit === 'Å/fs' ? null : 'A/fs');
      const why =
        velocitiesPlausible === true
          ? timeFix
          : velocitiesPlausible === false && velocityFix
            ? `the velocities are probably in ${velocityFix}: give --velocity-unit ${velocityFix}`
            : `either ${timeFix}, or the velocities are in another unit than ${s.velocityUnit} (--velocity-unit)`;
      throw new UsageError(
        `${file}: between consecutive frames the atoms move ${sig(q)} times farther than their velocities allow in the time between frames (RMS over ${r.pairs} frame pairs): ${why} (if the units assumed are right, say so with --velocity-unit and --time-unit: the mismatch is then a warning)`,
      );
    }
    if (q < 1 / 300) {
      add(
        `${file}: between consecutive frames the atoms move only ${sig(q)} of the distance their velocities give over the time between frames: if the frames are closer in time than read (${s.intervalFromOption ? '--frame-interval' : `times taken in ${s.timeUnit}`}), give ${s.intervalFromOption ? 'the right --frame-interval' : `--time-unit ${s.timeUnit === 'ns' ? 'ps' : 'fs'}`}; a solid, or frames far apart, also do this`,
      );
    }
  }
  if (r.massDensity !== null && (r.massDensity < 0.01 || r.massDensity > 25)) {
    add(
      `${file}: the mass density is ${sig(r.massDensity)} g/cm³, outside 0.01–25 g/cm³ (a dilute gas to the densest solids): check that the cell and the coordinates are both in Å and the masses in g/mol`,
    );
  }
  const sp = r.spread;
  if (sp && sp.extent > 1.5 * sp.width) {
    add(
      `${file}:${sp.line}: the atoms of frame ${sp.index + 1} spread over ${sig(sp.extent)} Å along cell vector ${'abc'[sp.axis]}, but the cell is ${sig(sp.width)} Å wide there: are the cell and the coordinates in the same unit (Å)? (unwrapped coordinates that have left the cell also do this)`,
    );
  }
  if (r.close && r.closeFrames * 2 > r.closeChecked) {
    const c = r.close;
    add(
      `${file}: atoms closer than ${CLOSE_DISTANCE} Å in ${r.closeFrames} of the ${r.closeChecked} frames checked (e.g. frame ${c.index + 1}: atoms ${c.a + 1} '${c.labelA}' and ${c.b + 1} '${c.labelB}' at ${sig(c.r)} Å): overlapping atoms suggest a wrong cell or length unit, or duplicated atoms`,
    );
  }
}

/** The range of self-diffusion coefficients of liquids, m²/s (see diffusionRangeWarning). */
export const LIQUID_DIFFUSION: readonly [number, number] = [1e-14, 1e-6];

/**
 * A warning when a diffusion coefficient `d` (m²/s) of group `label` lies outside 10⁻¹⁴–10⁻⁶ m²/s,
 * the span from glassy liquids (~10⁻¹⁴) past water (2.3·10⁻⁹ at 25 °C) to the edge of gases
 * (~10⁻⁵; from memory, no source checked): for a liquid, a wrong time between frames (a time unit
 * off by 10³) is the likely cause. Zero or negative values (no motion, noise) are left alone.
 * Added to `ctx.warnings` once.
 */
export function warnDiffusionRange(ctx: PassContext, label: string, d: number, method: string): void {
  if (!(d > 0) || (d >= LIQUID_DIFFUSION[0] && d <= LIQUID_DIFFUSION[1])) return;
  const file = ctx.file ?? 'the trajectory';
  const w =
    `${file}: D(${label}) from the ${method} is ${sig(d)} m²/s, outside the range of liquids (10⁻¹⁴–10⁻⁶ m²/s): ` +
    `if ${label} is in a liquid, check the time between frames (${ctx.frameInterval !== null ? `${sig(ctx.frameInterval)} ps; ` : ''}--time-unit, --frame-interval)`;
  if (!ctx.warnings.includes(w)) ctx.warnings.push(w);
}
