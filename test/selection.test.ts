import { describe, expect, it } from 'vitest';
import { parseSelection, selectAtoms } from '../src/selection.js';
import { UsageError } from '../src/errors.js';
import type { Topology } from '../src/types.js';

// A hand-built topology: two water molecules and a sodium ion. Expected index sets are
// written out by hand from this table (common practice, no source).
const topo: Topology = {
  atoms: 7,
  labels: ['OW', 'HW1', 'HW2', 'OW', 'HW1', 'HW2', 'Na'],
  elements: ['O', 'H', 'H', 'O', 'H', 'H', 'Na'],
  masses: new Float64Array(7),
  charges: null,
  residues: {
    names: ['SOL', 'SOL', 'SOL', 'SOL', 'SOL', 'SOL', 'ION'],
    numbers: Int32Array.from([1, 1, 1, 2, 2, 2, 3]),
    chains: Array(7).fill(''),
    molecule: Int32Array.from([0, 0, 0, 1, 1, 1, 2]),
    count: 3,
  },
};
const pick = (s: string) => Array.from(selectAtoms(s, topo));

describe('selection syntax', () => {
  it('labels, globs, elements, residues, ranges, unions, intersections, negation', () => {
    expect(pick('Na')).toEqual([6]);
    expect(pick('HW*')).toEqual([1, 2, 4, 5]);
    expect(pick('el=O')).toEqual([0, 3]);
    expect(pick('el=na')).toEqual([6]);
    expect(pick('res=SOL&el=H')).toEqual([1, 2, 4, 5]);
    expect(pick('idx=2-4')).toEqual([2, 3, 4]);
    expect(pick('idx=6,OW')).toEqual([0, 3, 6]);
    expect(pick('!el=H')).toEqual([0, 3, 6]);
    expect(pick('all')).toEqual([0, 1, 2, 3, 4, 5, 6]);
    expect(pick('label=HW1')).toEqual([1, 4]);
  });
  it('refuses empty selections and malformed terms as usage errors', () => {
    expect(() => pick('Li')).toThrow(UsageError);
    expect(() => pick('Li')).toThrow(/picks no atoms; labels present: OW, HW1, HW2, Na/);
    expect(() => parseSelection('idx=5-2')).toThrow(/backwards/);
    expect(() => parseSelection('foo=1')).toThrow(/unknown key/);
    expect(() => parseSelection('Na:Cl')).toThrow(/':'/);
    expect(() => parseSelection('Na,')).toThrow(/empty term/);
  });
});
