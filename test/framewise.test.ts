import { describe, expect, it } from 'vitest';
import { framewiseObservables, type FramewisePartial } from '../analyses/framewise.js';
import type { Frame, PassContext, Topology } from '../src/types.js';

const topology: Topology = {
  atoms: 12,
  labels: Array(12).fill('Ar'),
  elements: Array(12).fill('Ar'),
  masses: new Float64Array(12).fill(39.948),
  charges: null,
  residues: null,
};

function ctx(frameInterval: number | null): PassContext {
  return { topology, firstCell: null, frameInterval, warnings: [] };
}

function frame(index: number, time: number | null, cell: number[] | null): Frame {
  return {
    index,
    time,
    cell: cell ? Float64Array.from(cell) : null,
    positions: new Float64Array(36),
    velocities: null,
    line: 1,
    topology,
  };
}

function run(frames: Frame[], interval: number | null): FramewisePartial {
  const acc = framewiseObservables.create(ctx(interval));
  for (const f of frames) acc.frame(f);
  return acc.partial();
}

describe('framewise observables', () => {
  it('volume is |det(cell)| and density atoms/volume', () => {
    // Orthorhombic 3×4×5 Å: V = 60 Å³. Lower-triangular rows a = (10,0,0), b = (2,9,0),
    // c = (1,3,8): det = 10·9·8 = 720 Å³ (determinant of a triangular matrix, closed form).
    // Swapping two rows flips the sign of det; |det| stays 720. Tolerance 1e-12 relative: round-off.
    const p = run(
      [
        frame(0, 0, [3, 0, 0, 0, 4, 0, 0, 0, 5]),
        frame(1, 0.5, [10, 0, 0, 2, 9, 0, 1, 3, 8]),
        frame(2, 1.0, [2, 9, 0, 10, 0, 0, 1, 3, 8]),
      ],
      null,
    );
    const r = framewiseObservables.finish(p, ctx(null));
    expect(r.frames).toBe(3);
    const expected = [60, 720, 720];
    expected.forEach((v, i) => {
      expect(Math.abs(r.volume![i]! / v - 1)).toBeLessThan(1e-12);
      expect(Math.abs(r.density![i]! / (12 / v) - 1)).toBeLessThan(1e-12);
    });
    expect(Array.from(r.time!)).toEqual([0, 0.5, 1.0]);
  });

  it('times fall back to index × frame interval; no cell gives null volume and density', () => {
    // time = index·interval by definition (exact for these binary fractions).
    const p = run([frame(0, null, null), frame(1, null, null), frame(2, null, null)], 0.25);
    const r = framewiseObservables.finish(p, ctx(0.25));
    expect(Array.from(r.time!)).toEqual([0, 0.25, 0.5]);
    expect(r.volume).toBeNull();
    expect(r.density).toBeNull();
    const none = framewiseObservables.finish(run([frame(0, null, null)], null), ctx(null));
    expect(none.time).toBeNull();
  });

  it('merge concatenates in order and is associative', () => {
    // Concatenation (a then b) is associative by definition; the volumes 1, 8, 27, 64 Å³ of
    // cubes with edges 1…4 Å (closed form) must appear in frame order.
    const cube = (a: number): number[] => [a, 0, 0, 0, a, 0, 0, 0, a];
    const parts = [1, 2, 3, 4].map((a, i) => run([frame(i, i, cube(a))], null));
    const m = framewiseObservables.merge;
    const left = m(m(m(parts[0]!, parts[1]!), parts[2]!), parts[3]!);
    const right = m(parts[0]!, m(parts[1]!, m(parts[2]!, parts[3]!)));
    for (const merged of [left, right]) {
      expect(Array.from(merged.volume).map((v) => Math.round(v * 1e9) / 1e9)).toEqual([1, 8, 27, 64]);
      expect(Array.from(merged.time)).toEqual([0, 1, 2, 3]);
    }
  });

  it('records many frames (buffer growth) without losing any', () => {
    // 1000 frames with V = 1000 + i Å³ (cube edges (1000+i)^{1/3}); exact up to round-off 1e-9.
    const frames = Array.from({ length: 1000 }, (_, i) => {
      const a = Math.cbrt(1000 + i);
      return frame(i, i * 0.1, [a, 0, 0, 0, a, 0, 0, 0, a]);
    });
    const r = framewiseObservables.finish(run(frames, null), ctx(null));
    expect(r.volume!.length).toBe(1000);
    for (const i of [0, 63, 64, 65, 999]) expect(Math.abs(r.volume![i]! - (1000 + i))).toBeLessThan(1e-9);
  });
});
