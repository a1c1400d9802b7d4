/** Shared helpers for the reader tests (not a test file itself). */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openTrajectory, type OpenTrajectoryOptions, type TrajectoryInput } from '../readers/index.js';
import type { Frame, Topology } from '../src/types.js';

/** A frame with its arrays copied (readers reuse them). */
export interface FrameCopy {
  index: number;
  time: number | null;
  cell: number[] | null;
  positions: number[];
  velocities: number[] | null;
  line: number;
}

export function copyFrame(f: Frame): FrameCopy {
  return {
    index: f.index,
    time: f.time,
    cell: f.cell ? Array.from(f.cell) : null,
    positions: Array.from(f.positions),
    velocities: f.velocities ? Array.from(f.velocities) : null,
    line: f.line,
  };
}

export interface ReadAll {
  frames: FrameCopy[];
  topology: Topology | null;
  warnings: string[];
  input: TrajectoryInput;
  /** The Frame objects themselves (arrays reused). */
  raw: Frame[];
}

export async function readAll(path: string, opts: Partial<OpenTrajectoryOptions> = {}): Promise<ReadAll> {
  const warnings: string[] = opts.warnings ?? [];
  const input = await openTrajectory(path, { ...opts, warnings });
  const frames: FrameCopy[] = [];
  const raw: Frame[] = [];
  let topology: Topology | null = null;
  for await (const f of input.frames()) {
    frames.push(copyFrame(f));
    raw.push(f);
    topology = f.topology;
  }
  return { frames, topology, warnings, input, raw };
}

/** A temporary folder, removed by cleanup(). */
export function tempDir(prefix: string): { dir: string; file: (name: string, content: string | Uint8Array) => string; cleanup: () => void } {
  const dir = mkdtempSync(join(tmpdir(), `sojourn-${prefix}-`));
  return {
    dir,
    file(name, content) {
      const p = join(dir, name);
      writeFileSync(p, content);
      return p;
    },
    cleanup() {
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

/** Expect a promise to reject with an error of `cls` whose message matches every pattern. */
export async function rejectsWith(p: Promise<unknown>, cls: new (...a: never[]) => Error, ...patterns: (string | RegExp)[]): Promise<Error> {
  let err: unknown = null;
  try {
    await p;
  } catch (e) {
    err = e;
  }
  if (!(err instanceof cls)) throw new Error(`expected ${cls.name}, got ${err === null ? 'no error' : String(err)}`);
  for (const pat of patterns) {
    const ok = typeof pat === 'string' ? err.message.includes(pat) : pat.test(err.message);
    if (!ok) throw new Error(`message ${JSON.stringify(err.message)} does not match ${String(pat)}`);
  }
  return err;
}

/** Deterministic pseudo-random numbers in [0, 1) (Marsaglia's xorshift32, J. Stat. Softw. 8(14), 2003) for generated test files. */
export function generator(seed: number): () => number {
  let s = seed >>> 0 || 1;
  return () => {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    return s / 4294967296;
  };
}
