/**
 * The reading thread of readers/bytes.ts (read, hash and inflate in a helper thread, chunks
 * handed over by transfer and given back for reuse). It runs compiled JavaScript, so these
 * tests transpile the current sources (test/compiled-readers.ts) and force it with
 * `thread: true`.
 *
 * References outside the project: Number() of the strings written (ECMAScript StringToNumber);
 * node:crypto SHA-256 (FIPS 180-4) of the file bytes; gzip files made by node:zlib (RFC 1952),
 * not by the pako decoder under test; frame lines and offsets from the text the test builds.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { gzipSync } from 'node:zlib';
import { compiledReaders, type CompiledReaders } from './compiled-readers.js';
import { tempDir, generator } from './readers-helpers.js';

const tmp = tempDir('thread');
let lib: CompiledReaders;
beforeAll(async () => {
  lib = await compiledReaders();
}, 60_000);
afterAll(() => {
  tmp.cleanup();
  lib?.cleanup();
});


/** A plain-XYZ trajectory; returns the text, each frame's coordinate strings and first line. */
function build(nFrames: number, atoms: number) {
  const rnd = generator(31);
  const parts: string[] = [];
  const coords: string[][] = [];
  for (let f = 0; f < nFrames; f++) {
    const c: string[] = [];
    let s = `${atoms}\nframe ${f}\n`;
    for (let i = 0; i < atoms; i++) {
      const xyz = [0, 1, 2].map(() => ((rnd() - 0.5) * 50).toFixed(6));
      c.push(...xyz);
      s += `Ar ${xyz.join(' ')}\n`;
    }
    coords.push(c);
    parts.push(s);
  }
  return { text: parts.join(''), coords, line: (f: number) => f * (atoms + 2) + 1 };
}

const T = build(60, 40);
const plain = tmp.file('t.xyz', T.text);
const gzBytes = gzipSync(Buffer.from(T.text), { level: 6 });
const gz = tmp.file('t.xyz.gz', gzBytes);
const sha = (b: string | Buffer) => createHash('sha256').update(b).digest('hex');

async function readFrames(path: string, opts: Record<string, unknown>) {
  const input = await lib.index.openTrajectory(path, { warnings: [], ...opts });
  const got: { index: number; line: number; positions: number[] }[] = [];
  for await (const f of input.frames()) got.push({ index: f.index, line: f.line, positions: Array.from(f.positions) });
  return { input, got };
}

function expectFrames(got: { index: number; line: number; positions: number[] }[], indices: number[]): void {
  expect(got.map((f) => f.index)).toEqual(indices);
  for (const f of got) {
    expect(f.positions).toEqual(T.coords[f.index]!.map(Number));
    expect(f.line).toBe(T.line(f.index));
  }
}

const all = Array.from({ length: 60 }, (_, i) => i);

describe('reading thread', () => {
  // Small reads and output chunks: many hand-overs, a full queue, and buffers given back.
  for (const [name, path, bytes] of [
    ['plain', plain, Buffer.from(T.text)],
    ['gzip', gz, gzBytes],
  ] as const) {
    it(`${name}: the same frames and digest as the file holds, through many small chunks`, async () => {
      for (const size of [{ highWaterMark: 1 }, { highWaterMark: 997, outputChunk: 640 }, {}]) {
        const { input, got } = await readFrames(path, { thread: true, ...size });
        expectFrames(got, all);
        expect(input.sha256()).toBe(sha(bytes));
        expect(input.rawBytes()).toBe(bytes.length);
      }
    });

    it(`${name}: stopping early still gives the digest of the whole file`, async () => {
      const { input, got } = await readFrames(path, { thread: true, highWaterMark: 512, outputChunk: 512, select: { from: 2, to: 5, stride: 1 } });
      expectFrames(got, [2, 3, 4]);
      expect(input.sha256()).toBe(sha(bytes));
      expect(input.rawBytes()).toBe(bytes.length);
    });
  }

  it('a byte range read without hashing gives the frames of the range', async () => {
    const idx = await lib.scan.indexFrames(plain);
    const start = idx.start(17)!;
    const { input, got } = await readFrames(plain, { thread: true, format: 'xyz', hash: false, start, end: idx.start(40)!.offset, highWaterMark: 700 });
    expectFrames(got, Array.from({ length: 23 }, (_, i) => 17 + i));
    expect(() => input.sha256()).toThrow(/not computed/);
  });

  it('multi-member gzip with zero padding reads to the end (RFC 1952 members, padding ignored)', async () => {
    const half = T.text.indexOf('40\nframe 30\n');
    const two = Buffer.concat([gzipSync(T.text.slice(0, half)), gzipSync(T.text.slice(half)), Buffer.alloc(100)]);
    const p = tmp.file('two.xyz.gz', two);
    const { input, got } = await readFrames(p, { thread: true, outputChunk: 4096 });
    expectFrames(got, all);
    expect(input.sha256()).toBe(sha(two));
  });

  it('a cut gzip file is "gzip stream truncated", a damaged one "gzip data corrupted"', async () => {
    const cut = tmp.file('cut.xyz.gz', gzBytes.subarray(0, Math.floor(gzBytes.length * 0.6)));
    await expect(readFrames(cut, { thread: true })).rejects.toThrow(/gzip stream truncated/);
    const damaged = Buffer.from(gzBytes);
    damaged[damaged.length - 6]! ^= 0xff; // inside the CRC-32 trailer (RFC 1952 §2.2)
    const bad = tmp.file('bad.xyz.gz', damaged);
    const err = await readFrames(bad, { thread: true }).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(lib.errors.InputError);
    expect(String((err as Error).message)).toMatch(/gzip data corrupted/);
  });

  it('a source opened and never read to the end does not keep the process alive', () => {
    // The thread fills its queue (4 chunks of 1 KiB) and waits; the process must still exit.
    const url = pathToFileURL(join(lib.dir, 'readers/index.js')).href;
    const script = tmp.file(
      'open-only.mjs',
      `const m = await import(${JSON.stringify(url)});\nawait m.openTrajectory(${JSON.stringify(plain)}, { warnings: [], thread: true, highWaterMark: 1024 });\nconsole.log('opened');\n`,
    );
    const r = spawnSync(process.execPath, [script], { encoding: 'utf8', timeout: 20_000 });
    expect(r.stderr + r.stdout.trim()).toBe('opened');
    expect(r.status).toBe(0); // null when the timeout killed it
  });

  it('a missing file is an InputError naming it', async () => {
    const p = `${tmp.dir}/no-such.xyz`;
    await expect(readFrames(p, { thread: true, format: 'xyz' })).rejects.toThrow(`${p}: no such file`);
  });

  it('tables read through the thread give Number() of every value', async () => {
    const rows: string[] = ['# time a b'];
    const rnd = generator(3);
    const want: number[][] = [[], [], []];
    for (let i = 0; i < 5000; i++) {
      const r = [(i * 0.01).toFixed(2), (rnd() * 9).toExponential(6), (rnd() - 0.5).toFixed(8)];
      r.forEach((x, k) => want[k]!.push(Number(x)));
      rows.push(r.join(' '));
    }
    const text = rows.join('\n') + '\n';
    const p = tmp.file('t.tsv.gz', gzipSync(text));
    const t = await lib.index.readTable(p, { warnings: [], thread: true, outputChunk: 1000 });
    expect(t.rows).toBe(5000);
    expect(['time', 'a', 'b'].map((c) => Array.from(t.columns.get(c)!))).toEqual(want);
    expect(t.sha256).toBe(sha(gzipSync(text)));
  });
});
