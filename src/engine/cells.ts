/**
 * A pre-scan of the cells of a trajectory, before the read: every frame is skipped (no
 * coordinates parsed; XYZ reads only the Lattice= of each comment line, PDB its CRYST1 records),
 * so that a distance an analysis needs in every frame (g(r) up to r-max must stay within half
 * the smallest perpendicular width of each frame's cell, where the minimum image is unique) is
 * refused before any work, naming the first frame whose cell is too small.
 */
import { openTrajectory } from '../../readers/index.js';
import { InputError, UsageError } from '../errors.js';
import { minimumImageLimit } from '../cell.js';
import type { ReadSpec } from './read.js';

/** The first used frame of `spec` whose cell allows less than `reach` (Å), or null. */
export interface CellShortfall {
  /** 0-based frame index. */
  index: number;
  line: number;
  /** Half the smallest perpendicular width of its cell (Å). */
  limit: number;
}

/**
 * Scan the cells of the frames `spec` uses (its range and stride; frames without a cell take
 * `spec.cell`) and return the first whose minimum-image limit — half the smallest perpendicular
 * width, src/cell.ts `minimumImageLimit` — is below `reach` (with 10⁻⁹ relative slack), or null.
 * Standard input cannot be read twice and is not scanned (the read checks each frame); a file
 * the scan cannot read is left to the read, which reports it at its line.
 */
export async function firstCellBelow(spec: ReadSpec, reach: number): Promise<CellShortfall | null> {
  if (spec.file === '-') return null;
  const range = spec.range ?? { from: 0, to: Infinity, stride: 1 };
  let found: CellShortfall | null = null;
  let last: Float64Array | null = null;
  let lastLimit = Infinity;
  class Found extends Error {}
  try {
    const input = await openTrajectory(spec.file, {
      ...(spec.format ? { format: spec.format } : {}),
      warnings: [],
      hash: false,
      select: { from: Infinity, to: Infinity, stride: 1 },
      onSkippedCell: (index, line, given) => {
        if (index < range.from || index >= range.to || (index - range.from) % range.stride !== 0) return;
        const cell = given ?? spec.cell;
        if (cell === null) return;
        if (last === null || cell.some((x, k) => x !== last![k])) {
          last = Float64Array.from(cell);
          lastLimit = minimumImageLimit(cell);
        }
        if (lastLimit < reach * (1 - 1e-9)) {
          found = { index, line, limit: lastLimit };
          throw new Found();
        }
      },
    });
    for await (const _ of input.frames()) void _;
  } catch (e) {
    if (!(e instanceof Found) && !(e instanceof InputError)) throw e;
  }
  return found;
}

/**
 * Refuse, before the read, a distance `reach` (Å) given with `flag` that some used frame's cell
 * does not allow (`firstCellBelow`): a usage error naming the frame, its line and its limit.
 */
export async function checkCellsAllow(spec: ReadSpec, reach: number, flag: string): Promise<void> {
  const s = await firstCellBelow(spec, reach);
  if (s === null) return;
  const name = spec.file === '-' ? '<stdin>' : spec.file;
  throw new UsageError(
    `${flag} ${reach} A exceeds half the smallest perpendicular width of the cell of frame ${s.index + 1} (${name}:${s.line}: ${s.limit.toFixed(4)} A), ` +
      `where the minimum-image distance stops being unique: give ${flag} ${Math.floor(s.limit * 1000) / 1000}A or less, or leave it out (the default is the smallest half-width over the run)`,
  );
}
