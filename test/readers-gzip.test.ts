import { afterAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { gzipSync } from 'node:zlib';
import { ByteSource } from '../readers/bytes.js';
import { readTable } from '../readers/index.js';
import { InputError } from '../src/errors.js';
import { readAll, rejectsWith, tempDir, type ReadAll } from './readers-helpers.js';

const tmp = tempDir('gzip');
afterAll(() => tmp.cleanup());

/*
 * The compressed files are made with node:zlib (zlib itself, RFC 1952 gzip), an implementation
 * independent of the pako decoder under test.
 */

/** A deterministic multi-frame extended-XYZ text (xorshift32 coordinates). */
function trajectoryText(frames: number, atoms: number): string {
  let s = 2463534242;
  const rnd = () => {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    return s / 4294967296;
  };
  const out: string[] = [];
  for (let f = 0; f < frames; f++) {
    out.push(String(atoms), `Lattice="20 0 0 0 20 0 0 0 20" Properties=species:S:1:pos:R:3:vel:R:3 Time=${f * 0.25}`);
    for (let i = 0; i < atoms; i++) {
      const v = Array.from({ length: 6 }, () => ((rnd() - 0.5) * 40).toFixed(6));
      out.push(`${i % 2 ? 'Na' : 'Cl'} ${v.join(' ')}`);
    }
  }
  return out.join('\n') + '\n';
}

/** Frame-by-frame bit-identical comparison (positions, velocities, cell as raw bytes). */
function expectBitIdentical(a: ReadAll, b: ReadAll): void {
  expect(b.frames.length).toBe(a.frames.length);
  const bits = (x: number[] | null) => (x === null ? null : Buffer.from(Float64Array.from(x).buffer).toString('hex'));
  for (let k = 0; k < a.frames.length; k++) {
    const fa = a.frames[k]!;
    const fb = b.frames[k]!;
    expect(bits(fb.positions)).toBe(bits(fa.positions));
    expect(bits(fb.velocities)).toBe(bits(fa.velocities));
    expect(bits(fb.cell)).toBe(bits(fa.cell));
    expect(fb.time).toBe(fa.time);
    expect(fb.line).toBe(fa.line);
  }
}

const TEXT = trajectoryText(40, 50);
const plainPath = tmp.file('traj.xyz', TEXT);
const gz = gzipSync(Buffer.from(TEXT), { level: 6 });
const gzPath = tmp.file('traj.xyz.gz', gz);

describe('gzip layer', () => {
  it('a .gz trajectory gives bit-identical frames to the plain file', async () => {
    const a = await readAll(plainPath);
    const b = await readAll(gzPath);
    expect(a.frames.length).toBe(40);
    expectBitIdentical(a, b);
    // sha256 and byte count are of the raw (compressed) file, as node:crypto computes it
    expect(b.input.sha256()).toBe(createHash('sha256').update(gz).digest('hex'));
    expect(b.input.rawBytes()).toBe(gz.length);
  });

  it('is detected by the magic bytes, not the name', async () => {
    const a = await readAll(plainPath);
    const b = await readAll(tmp.file('traj-compressed.xyz', gz)); // no .gz in the name
    expectBitIdentical(a, b);
    const c = await readAll(tmp.file('noext-compressed', gz)); // content sniffed after inflating
    expect(c.input.format).toBe('xyz');
    expectBitIdentical(a, c);
  });

  it('tiny read sizes give the same frames (chunk-boundary independence through inflate)', async () => {
    const a = await readAll(plainPath);
    for (const hwm of [17, 256, 4099]) expectBitIdentical(a, await readAll(gzPath, { highWaterMark: hwm }));
    // 1- and 3-byte reads on a smaller file (every byte boundary, kept quick)
    const small = trajectoryText(4, 6);
    const sp = await readAll(tmp.file('small.xyz', small));
    const sgz = tmp.file('small.xyz.gz', gzipSync(Buffer.from(small)));
    for (const hwm of [1, 3]) expectBitIdentical(sp, await readAll(sgz, { highWaterMark: hwm }));
  });

  it('reads multi-member gzip (concatenated members) to the end, and ignores zero padding', async () => {
    const cut = TEXT.indexOf('\n', Math.floor(TEXT.length / 3)) + 1;
    const cut2 = Math.floor((TEXT.length * 2) / 3); // mid-line: members need not end on a line
    const multi = Buffer.concat([
      gzipSync(Buffer.from(TEXT.slice(0, cut))),
      gzipSync(Buffer.from(TEXT.slice(cut, cut2))),
      gzipSync(Buffer.from(TEXT.slice(cut2))),
    ]);
    const a = await readAll(plainPath);
    for (const hwm of [undefined, 7, 4096]) {
      const r = await readAll(tmp.file('multi.xyz.gz', multi), hwm ? { highWaterMark: hwm } : {});
      expectBitIdentical(a, r);
    }
    // member boundaries falling inside and exactly at 1-byte reads
    const small = trajectoryText(3, 4);
    const k = small.indexOf('\n', 40) + 1;
    const smulti = Buffer.concat([gzipSync(Buffer.from(small.slice(0, k))), gzipSync(Buffer.from(small.slice(k)))]);
    const sp = await readAll(tmp.file('small2.xyz', small));
    expectBitIdentical(sp, await readAll(tmp.file('smulti.xyz.gz', smulti), { highWaterMark: 1 }));
    const padded = Buffer.concat([gz, Buffer.alloc(512)]);
    expectBitIdentical(a, await readAll(tmp.file('padded.xyz.gz', padded)));
  });

  it('a truncated gzip stream is reported as such, not as a parse error', async () => {
    for (const keep of [gz.length - 1, gz.length - 8, Math.floor(gz.length / 2), 5, 2]) {
      const p = tmp.file(`trunc-${keep}.xyz.gz`, gz.subarray(0, keep));
      await rejectsWith(readAll(p), InputError, 'gzip stream truncated');
    }
  });

  it('corrupted gzip data is reported as such, not as a parse error', async () => {
    const crc = Buffer.from(gz);
    crc[crc.length - 6] ^= 0xff; // CRC-32 field (RFC 1952 §2.3.1: CRC32 then ISIZE)
    await rejectsWith(readAll(tmp.file('crc.xyz.gz', crc)), InputError, 'gzip data corrupted', 'incorrect data check');
    const len = Buffer.from(gz);
    len[len.length - 2] ^= 0x01; // ISIZE field
    await rejectsWith(readAll(tmp.file('len.xyz.gz', len)), InputError, 'gzip data corrupted', 'incorrect length check');
    const cm = Buffer.from(gz);
    cm[2] = 7; // CM must be 8 (deflate)
    await rejectsWith(readAll(tmp.file('cm.xyz.gz', cm)), InputError, 'gzip data corrupted', 'unknown compression method');
    const trailing = Buffer.concat([gz, Buffer.from('garbage')]);
    await rejectsWith(readAll(tmp.file('trail.xyz.gz', trailing)), InputError, 'gzip data corrupted', 'not another gzip member');
  });

  it('any single flipped byte in the deflate data gives a gzip error (corrupted or truncated), never a parse error or silent success', async () => {
    const step = Math.max(1, Math.floor((gz.length - 30) / 40));
    for (let pos = 20; pos < gz.length - 8; pos += step) {
      const bad = Buffer.from(gz);
      bad[pos] ^= 0x5a;
      const p = tmp.file('flip.xyz.gz', bad);
      await rejectsWith(readAll(p), InputError, /gzip (data corrupted|stream truncated)/);
    }
  });

  it('corruption early in a large stream is reported as gzip corruption even though the parser sees bad text first', async () => {
    // > 1 MiB of text: the first decompressed chunk reaches the parser long before the CRC-32
    // at the end is checked; the reader must still name the gzip problem.
    const big = trajectoryText(300, 60);
    const bgz = gzipSync(Buffer.from(big));
    for (const pos of [200, 1000, 5000, 20000]) {
      const bad = Buffer.from(bgz);
      bad[pos] ^= 0x5a;
      await rejectsWith(readAll(tmp.file('bigflip.xyz.gz', bad)), InputError, /gzip (data corrupted|stream truncated)/);
    }
  });

  it('tables read through gzip too', async () => {
    const t = '# time pxy\n0 1.5\n1 2.5\n2 3.5\n';
    const a = await readTable(tmp.file('p.tsv', t), { warnings: [] });
    const b = await readTable(tmp.file('p.tsv.gz', gzipSync(Buffer.from(t))), { warnings: [] });
    expect(Array.from(b.columns.get('pxy')!)).toEqual(Array.from(a.columns.get('pxy')!));
    await rejectsWith(readTable(tmp.file('pc.tsv.gz', gzipSync(Buffer.from(t)).subarray(0, 20)), { warnings: [] }), InputError, 'gzip stream truncated');
  });

  it('ByteSource: raw SHA-256 and sizes; decompressed bytes equal the original', async () => {
    const src = new ByteSource(gzPath, { highWaterMark: 1000, outputChunk: 4096 });
    const parts: Uint8Array[] = [];
    for await (const c of src.chunks()) parts.push(c.slice());
    expect(src.compressed).toBe(true);
    expect(Buffer.concat(parts).toString('latin1')).toBe(TEXT);
    expect(src.rawBytes).toBe(gz.length);
    expect(src.outBytes).toBe(TEXT.length);
    expect(src.sha256()).toBe(createHash('sha256').update(readFileSync(gzPath)).digest('hex'));
    const plain = new ByteSource(plainPath);
    for await (const _ of plain.chunks()) void _;
    expect(plain.compressed).toBe(false);
    expect(plain.sha256()).toBe(createHash('sha256').update(TEXT).digest('hex'));
  });
});
