/**
 * Core data types shared by readers, analyses and the CLI.
 *
 * Conventions (fixed across the whole code base):
 * - lengths in Å, times in ps, velocities in Å/ps, masses in g/mol, charges in units of e;
 * - a cell is a 3×3 matrix stored row-major in a Float64Array(9) whose rows are the cell
 *   vectors a, b, c (Cartesian, Å); a is along x and b lies in the xy plane when the cell
 *   came from lengths and angles (PDB convention);
 * - positions and velocities are flat Float64Arrays [x0, y0, z0, x1, y1, z1, ...].
 */

/** A 3×3 cell matrix, rows = cell vectors a, b, c in Å (row-major, length 9). */
export type CellMatrix = Float64Array;

/** Residue (molecule) information for atoms, when the format provides it (PDB). */
export interface Residues {
  /** Residue name of each atom. */
  names: string[];
  /** Residue sequence number of each atom, as written in the file. */
  numbers: Int32Array;
  /** Chain identifier of each atom ('' when blank). */
  chains: string[];
  /** 0-based molecule index of each atom: consecutive atoms sharing (chain, number, name) form one molecule. */
  molecule: Int32Array;
  /** Number of molecules. */
  count: number;
}

/** What is known about the atoms of a trajectory; fixed for the whole file. */
export interface Topology {
  /** Number of atoms. */
  atoms: number;
  /** Atom label as written (XYZ species column, PDB atom name trimmed). */
  labels: string[];
  /** Chemical element symbol ('X' when unknown), normalised capitalisation ("Cl", "Na"). */
  elements: string[];
  /** Atomic mass in g/mol (IUPAC standard atomic weights); NaN where unknown. */
  masses: Float64Array;
  /**
   * Where each atom's element and mass came from, as a code of src/masses.ts MASS_ORIGINS
   * (element symbol, element column, --elements, --masses, guessed, ambiguous, none); absent
   * when a topology was built by hand (then read from the labels on demand).
   */
  massFrom?: Uint8Array;
  /** Formal charge per atom in e, when the file gives charges; otherwise null. */
  charges: Float64Array | null;
  /** Residues/molecules when the file defines them; otherwise null. */
  residues: Residues | null;
}

/**
 * One frame of a trajectory. Readers reuse the typed arrays between frames: a consumer that
 * keeps data beyond the current iteration step must copy it.
 */
export interface Frame {
  /** 0-based frame index in the file. */
  index: number;
  /** Simulation time in ps if the file carries it, else null. */
  time: number | null;
  /** Cell matrix for this frame, or null when the file has none. */
  cell: CellMatrix | null;
  /** Positions, Å, length 3·atoms. */
  positions: Float64Array;
  /** Velocities, Å/ps, length 3·atoms, or null. */
  velocities: Float64Array | null;
  /** 1-based line number in the (decompressed) input at which this frame starts. */
  line: number;
  /** The topology, identical object for every frame of one file. */
  topology: Topology;
}

/** A number with its uncertainty (one standard error, or null when none is known) and unit. */
export interface Quantity {
  value: number;
  uncertainty: number | null;
  unit: string;
}

/** Build a Quantity. */
export function quantity(value: number, uncertainty: number | null, unit: string): Quantity {
  return { value, uncertainty, unit };
}

/** Warnings collected while reading and analysing; printed to stderr and put in JSON output. */
export type Warnings = string[];

/** Everything a pass may know before the first frame arrives. */
export interface PassContext {
  topology: Topology;
  /** Cell of the first frame (null when the file has no cell and none was given). */
  firstCell: CellMatrix | null;
  /** Time between frames in ps (from the file's times or --frame-interval), or null. */
  frameInterval: number | null;
  /** Append human-readable warnings here. */
  warnings: Warnings;
  /** The input's name for messages ('<stdin>' for standard input), when known. */
  file?: string;
}

/**
 * A streaming analysis. The runner calls `create` once per reader (or per worker), feeds it
 * frames in order with `frame`, then collects `partial()`. Partials from consecutive frame
 * ranges (or atom batches) combine with `merge(earlier, later)`, which must be associative;
 * `finish` turns the merged partial into the plain result object.
 *
 * A Partial must survive structured clone (worker_threads postMessage) and the JSON codec in
 * src/partials.ts (typed arrays are allowed).
 */
export interface Pass<P = unknown, R = unknown> {
  /** Short identifier, used as the key of its result. */
  readonly name: string;
  /**
   * The result is a function of the time lag between frames (MSD, VACF, residence …), so the
   * frames must be evenly spaced in time: an uneven spacing is an error, not a warning
   * (src/sequence.ts).
   */
  readonly needsEvenSpacing?: boolean;
  /** A fresh accumulator for one stream of frames. */
  create(ctx: PassContext): PassAccumulator<P>;
  /** Combine two partials (a covers frames before b). */
  merge(a: P, b: P): P;
  /** Final result from the merged partial. */
  finish(p: P, ctx: PassContext): R;
}

/** Per-stream state of a pass. */
export interface PassAccumulator<P> {
  frame(f: Frame): void;
  partial(): P;
}
