/**
 * The pass protocol, for every registered analysis: finishing the merged partials of frame chunks
 * cut at random places (merged in a random bracketing, since merge is associative) equals
 * finishing one run over all frames; and where an analysis declares the site axis, adding the
 * site sums of random disjoint site batches equals one read of all sites. The truth is the one
 * full run of the same pass on the same frames (common practice, no source): splitting work must
 * change nothing but round-off, so floating-point values agree to 1e-9 relative (sums taken in
 * another order differ in the last bits; 1e-9 is far above that and far below any physical
 * difference).
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { ANALYSES, PASS_FACTORIES, makePass } from '../analyses/index.js';
import type { Frame, Pass, PassContext, Topology } from '../src/types.js';
import type { AnyAnalysis } from '../src/engine/analysis.js';
import { readOptionValues } from '../src/engine/options.js';
import { Random } from '../src/random.js';
import { orthorhombicCell } from '../src/cell.js';
import { storePass, type StorePartial } from '../src/store/store.js';
import { resolveLayout } from '../src/store/layout.js';
import { groupSitesInBatch } from '../src/engine/batches.js';

const ATOMS = 24;
const FRAMES = 60;
const L = 12;
const DT = 0.05;

/** Random-walk frames with velocities of Na/Cl/W atoms in a cube (wrapped positions). */
function makeFrames(seed: number): Frame[] {
  const rnd = new Random(seed);
  const labels = Array.from({ length: ATOMS }, (_, i) => (i % 3 === 0 ? 'Na' : i % 3 === 1 ? 'Cl' : 'W'));
  const topology: Topology = {
    atoms: ATOMS,
    labels,
    elements: labels.map((l) => (l === 'W' ? 'O' : l)),
    masses: Float64Array.from(labels, (l) => (l === 'Na' ? 22.99 : l === 'Cl' ? 35.45 : 18)),
    charges: null,
    residues: null,
  };
  const cell = orthorhombicCell(L, L, L);
  const x = Float64Array.from({ length: 3 * ATOMS }, () => rnd.uniform() * L);
  const frames: Frame[] = [];
  for (let f = 0; f < FRAMES; f++) {
    const v = Float64Array.from({ length: 3 * ATOMS }, () => rnd.normal());
    if (f > 0) for (let k = 0; k < x.length; k++) x[k] += v[k]! * DT;
    frames.push({
      index: f,
      time: f * DT,
      cell: Float64Array.from(cell),
      positions: Float64Array.from(x, (p) => ((p % L) + L) % L),
      velocities: v,
      line: 1 + f * (ATOMS + 2),
      topology,
    });
  }
  return frames;
}

function contextFor(frames: Frame[]): PassContext {
  return { topology: frames[0]!.topology, firstCell: frames[0]!.cell, frameInterval: DT, warnings: [] };
}

/** Run a pass over frames [a, b) as one stream. */
function partialOf(pass: Pass, frames: Frame[], a: number, b: number): unknown {
  const acc = pass.create(contextFor(frames.slice(a, b)));
  for (let i = a; i < b; i++) acc.frame(frames[i]!);
  return acc.partial();
}

/** Merge a list of partials in order with a bracketing chosen by `split` (associativity). */
function mergeTree(pass: Pass, parts: unknown[], split: (n: number) => number): unknown {
  if (parts.length === 1) return parts[0];
  const k = 1 + (split(parts.length - 1) % (parts.length - 1));
  return pass.merge(mergeTree(pass, parts.slice(0, k), split), mergeTree(pass, parts.slice(k), split));
}

/** Deep equality with a relative tolerance on numbers. */
function expectClose(actual: unknown, expected: unknown, path = 'result'): void {
  if (typeof expected === 'number' && typeof actual === 'number') {
    if (Number.isNaN(expected)) return void expect(Number.isNaN(actual), path).toBe(true);
    const tol = 1e-9 * Math.max(1, Math.abs(expected));
    if (!(Math.abs(actual - expected) <= tol)) expect.fail(`${path}: ${actual} differs from ${expected}`);
    return;
  }
  if (ArrayBuffer.isView(expected) || Array.isArray(expected)) {
    const e = Array.from(expected as ArrayLike<unknown>);
    const a = Array.from(actual as ArrayLike<unknown>);
    expect(a.length, `${path}.length`).toBe(e.length);
    e.forEach((x, i) => expectClose(a[i], x, `${path}[${i}]`));
    return;
  }
  if (expected !== null && typeof expected === 'object') {
    expect(Object.keys(actual as object).sort(), path).toEqual(Object.keys(expected).sort());
    for (const [k, v] of Object.entries(expected)) expectClose((actual as Record<string, unknown>)[k], v, `${path}.${k}`);
    return;
  }
  expect(actual, path).toEqual(expected);
}

/** Command-line option texts for each registered analysis on the frames above. */
const CASES: Record<string, Record<string, unknown>> = {
  rdf: { pair: ['Na:Cl', 'W:W'], blocks: '3', binWidth: '0.2A' },
  shell: { center: 'Na', around: 'W', cutoff: '4A', tolerance: '0.1ps', segments: '3' },
  vacf: { segments: '3' },
  msd: { segments: '3', alpha2: true },
  diffusion: { segments: '3' },
  conductivity: { charges: 'Na=+1,Cl=-1', temperature: '300K', segments: '3', greenKubo: true },
};

describe('every registered analysis merges like one run', () => {
  it('every registered analysis has a case here and a pass factory', () => {
    for (const d of ANALYSES) {
      expect(CASES[d.name], d.name).toBeDefined();
      expect(PASS_FACTORIES[d.name], d.name).toBeDefined();
    }
  });

  for (const d of ANALYSES) {
    it(`${d.name}: random frame cuts and bracketings`, () => {
      const options = d.configure(readOptionValues(d.options, CASES[d.name]!));
      fc.assert(
        fc.property(
          fc.integer({ min: 1, max: 1e6 }),
          fc.uniqueArray(fc.integer({ min: 2, max: FRAMES - 2 }), { minLength: 1, maxLength: 5 }),
          fc.integer({ min: 0, max: 1e6 }),
          (seed, cutsRaw, bracket) => {
            const frames = makeFrames(seed);
            const pass = makePass(d.name, options);
            const whole = pass.finish(partialOf(pass, frames, 0, FRAMES), contextFor(frames));
            const cuts = [0, ...cutsRaw.sort((a, b) => a - b), FRAMES];
            const parts = cuts.slice(1).map((b, i) => partialOf(pass, frames, cuts[i]!, b));
            let r = bracket;
            const merged = mergeTree(pass, parts, (n) => (r = (r * 1103515245 + 12345) % 2147483648) % n);
            expectClose(pass.finish(merged, contextFor(frames)), whole);
          },
        ),
        { numRuns: 12 },
      );
    });
  }

  for (const d of ANALYSES.filter((a): a is AnyAnalysis & { sites: NonNullable<AnyAnalysis['sites']> } => a.sites !== undefined)) {
    it(`${d.name}: site sums of random disjoint batches add up to one read`, () => {
      const o = d.configure(readOptionValues(d.options, CASES[d.name]!));
      const axis = d.sites;
      fc.assert(
        fc.property(fc.integer({ min: 1, max: 1e6 }), fc.integer({ min: 2, max: 5 }), (seed, count) => {
          const frames = makeFrames(seed);
          const ctx = contextFor(frames);
          const layout = resolveLayout(axis.layout(o), frames[0]!.topology);
          const all = Int32Array.from({ length: layout.map.count }, (_, i) => i);
          const storeOf = (sites: Int32Array) => {
            const p = storePass({ ...axis.store(o, true), sites: Array.from(sites) });
            return p.finish(partialOf(p, frames, 0, FRAMES), ctx) as StorePartial;
          };
          const full = storeOf(all);
          const record = { info: full, reads: 1, bytesHeld: 0, note: '' };
          const one = axis.finish(axis.sums(full, layout, groupSitesInBatch(layout, all), ctx, o), record, layout, ctx, o);
          const per = Math.ceil(all.length / count);
          let sums: unknown = null;
          for (let a = 0; a < all.length; a += per) {
            const batch = all.slice(a, a + per);
            const part = axis.sums(storeOf(batch), layout, groupSitesInBatch(layout, batch), ctx, o);
            sums = sums === null ? part : axis.add(sums, part);
          }
          expectClose(axis.finish(sums, record, layout, ctx, o), one);
        }),
        { numRuns: 6 },
      );
    });
  }
});
