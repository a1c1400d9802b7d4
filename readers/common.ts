/**
 * Pieces shared by the trajectory readers: options, topology building, truncation policy.
 */
import { totalmem } from 'node:os';
import { InputError } from '../src/errors.js';
import { atomicMass, normaliseElement, readLabel } from '../src/elements.js';
import { MASS_FROM } from '../src/masses.js';
import type { Residues, Topology } from '../src/types.js';

/**
 * Frames wanted from a file: indices from, from + stride, from + 2·stride, … below `to`
 * (0-based frame indices of the whole file; `to` exclusive, Infinity for "to the end").
 */
export interface FrameSelection {
  from: number;
  to: number;
  stride: number;
}

/** True when frame `index` is one of the selection's frames (all frames without one). */
export function frameWanted(sel: FrameSelection | undefined, index: number): boolean {
  return sel === undefined || (index >= sel.from && index < sel.to && (index - sel.from) % sel.stride === 0);
}

/**
 * What a parser carries from earlier frames into a frame, so that reading can start at that
 * frame's first byte (readers/scan.ts records it; the XYZ format carries nothing).
 * PDB: the cell of the last CRYST1 (9 numbers, rows a, b, c; null when none is in force), the
 * time from a TITLE record still waiting for its frame, and whether the placeholder-CRYST1
 * warning was already given.
 */
export interface FrameSeed {
  cell: number[] | null;
  time: number | null;
  placeholderWarned: boolean;
}

/** Where a frame starts: its index, the line number and byte offset of its first line. */
export interface FrameStartInfo {
  index: number;
  line: number;
  offset: number;
  seed: FrameSeed | null;
}

/** Options every trajectory parser takes. */
export interface TrajectoryReadOptions {
  /** Throw instead of warning when the last frame is truncated. */
  strict?: boolean;
  /** Human-readable warnings are appended here. */
  warnings: string[];
  /**
   * Frames to produce. Frames outside it are skipped by counting their lines (XYZ) or records
   * (PDB) only: no numbers are parsed and nothing is checked that counting does not need.
   * Consistency checks (atom count, labels, Lattice/Properties/velocities presence) compare
   * with the first frame produced, not the first frame of the file.
   */
  select?: FrameSelection;
  /** Index of the first frame in the text (when reading starts at a frame's first byte). */
  firstIndex?: number;
  /** State carried into the first frame (when reading starts at a frame's first byte). */
  seed?: FrameSeed | null;
  /** Called at the first line of every frame, wanted or not (readers/scan.ts builds its index). */
  onFrameStart?: (info: FrameStartInfo) => void;
  /**
   * Called for every skipped frame with its cell (rows a, b, c in Å; null when it has none or,
   * XYZ, when its Lattice= cannot be read): XYZ reads the comment line of skipped frames for it
   * only when this is given; PDB gives the cell in force when the frame ends. A pre-scan of the
   * cells (src/engine/cells.ts) skips every frame.
   */
  onSkippedCell?: (index: number, line: number, cell: Float64Array | null) => void;
}

/**
 * Build the Topology of a file from its first frame. `elementColumn[i]`, when given and
 * non-empty, is an element symbol from the file (PDB columns 77–78) and wins over the label.
 */
export function buildTopology(
  labels: string[],
  elementColumn: (string | null)[] | null,
  charges: Float64Array | null,
  residues: Residues | null,
): Topology {
  const n = labels.length;
  const elements = new Array<string>(n);
  const masses = new Float64Array(n);
  const massFrom = new Uint8Array(n);
  const cache = new Map<string, { element: string; code: number }>();
  for (let i = 0; i < n; i++) {
    const given = elementColumn ? elementColumn[i] : null;
    let el: string;
    if (given) {
      el = normaliseElement(given) ?? 'X';
      massFrom[i] = el === 'X' ? MASS_FROM.none : MASS_FROM.column;
    } else {
      const label = labels[i]!;
      let c = cache.get(label);
      if (c === undefined) {
        const r = readLabel(label);
        const code = r.kind === 'symbol' ? MASS_FROM.symbol : r.kind === 'inferred' ? MASS_FROM.inferred : r.kind === 'ambiguous' ? MASS_FROM.ambiguous : MASS_FROM.none;
        c = { element: r.element, code };
        cache.set(label, c);
      }
      el = c.element;
      massFrom[i] = c.code;
    }
    elements[i] = el;
    masses[i] = el === 'X' ? NaN : atomicMass(el);
    if (!Number.isFinite(masses[i]!)) massFrom[i] = MASS_FROM.none;
  }
  return { atoms: n, labels, elements, masses, massFrom, charges, residues };
}

/**
 * Apply the truncated-last-frame policy. `frameNo` is 1-based; `complete` is the number of
 * complete frames read before it. Throws InputError when strict or when no frame is complete,
 * otherwise appends a warning.
 */
export function truncatedLastFrame(
  file: string,
  opts: TrajectoryReadOptions,
  frameNo: number,
  startLine: number,
  detail: string,
  complete: number,
): void {
  if (complete === 0) {
    throw new InputError(file, startLine, null, `no complete frame: frame 1 is truncated (${detail})`);
  }
  if (opts.strict) {
    throw new InputError(file, startLine, null, `frame ${frameNo} is truncated (${detail}); strict mode rejects a truncated last frame`);
  }
  const s = complete === 1 ? '' : 's';
  opts.warnings.push(
    `${file}: frame ${frameNo} is truncated (it starts at line ${startLine}; ${detail}); it is ignored and the ${complete} complete frame${s} ${complete === 1 ? 'is' : 'are'} analysed`,
  );
}

/** Hard ceiling on the atoms of one frame, whatever the machine: 2^28. */
export const ATOM_CEILING = 2 ** 28;

/**
 * The largest atom count a reader accepts before allocating anything for it: the smaller of
 * 2^28 and the count whose coordinate arrays (positions and velocities, 2 × 3 × 8 = 48 bytes
 * per atom) would fill half of this machine's memory (os.totalmem()). A count line above it
 * is refused with an InputError instead of a failed allocation or an exhausted machine.
 */
export function maxAtoms(): number {
  // Asked once per frame when frames are only counted (os.totalmem() reads the system's memory
  // figures each time: ~50 µs), so the answer is kept.
  maxAtomsMemo ??= Math.min(ATOM_CEILING, Math.floor(totalmem() / 2 / 48));
  return maxAtomsMemo;
}
let maxAtomsMemo: number | null = null;

/** Why `n` atoms are too many for this machine (see maxAtoms), or null when they fit. */
export function tooManyAtoms(n: number): string | null {
  const limit = maxAtoms();
  if (n <= limit) return null;
  const gib = (b: number) => (b / 2 ** 30).toFixed(1);
  return `${n} atoms are more than this reader accepts (at most ${limit}: 2^28, and the coordinate arrays, 48 bytes per atom = ${gib(48 * n)} GiB here, may use at most half of the machine's ${gib(totalmem())} GiB); the count is probably corrupted`;
}
