/**
 * Pieces shared by the trajectory readers: options, topology building, truncation policy.
 */
import { InputError } from '../src/errors.js';
import { atomicMass, elementFromLabel, normaliseElement } from '../src/elements.js';
import type { Residues, Topology } from '../src/types.js';

/** Options every trajectory parser takes. */
export interface TrajectoryReadOptions {
  /** Throw instead of warning when the last frame is truncated. */
  strict?: boolean;
  /** Human-readable warnings are appended here. */
  warnings: string[];
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
  const cache = new Map<string, string>();
  for (let i = 0; i < n; i++) {
    const given = elementColumn ? elementColumn[i] : null;
    let el: string;
    if (given) {
      el = normaliseElement(given) ?? 'X';
    } else {
      const label = labels[i]!;
      let c = cache.get(label);
      if (c === undefined) {
        c = elementFromLabel(label);
        cache.set(label, c);
      }
      el = c;
    }
    elements[i] = el;
    masses[i] = el === 'X' ? NaN : atomicMass(el);
  }
  return { atoms: n, labels, elements, masses, charges, residues };
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
