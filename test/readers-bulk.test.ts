/**
 * The fused fast paths of the readers: the native newline search of readers/lines.ts, the
 * delimiter-aware fastFloat, and the column-table bulk path with its block storage.
 *
 * References outside the project: String.prototype.indexOf for the newline search; Number()
 * (ECMAScript StringToNumber) for every value; line and column numbers are worked out from the
 * text the test builds.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { gzipSync } from 'node:zlib';
import { fastFloat, findNewline } from '../readers/lines.js';
import { readTable } from '../readers/index.js';
import { InputError } from '../src/errors.js';
import { rejectsWith, tempDir, generator } from './readers-helpers.js';

const tmp = tempDir('bulk');
afterAll(() => tmp.cleanup());


describe('findNewline', () => {
  it('finds the same positions as String.prototype.indexOf, from every start', () => {
    const rnd = generator(5);
    for (let trial = 0; trial < 20; trial++) {
      const n = 1 + Math.floor(rnd() * 300);
      const bytes = new Uint8Array(n);
      for (let i = 0; i < n; i++) bytes[i] = rnd() < 0.1 ? 10 : 32 + Math.floor(rnd() * 90);
      const text = Buffer.from(bytes).toString('latin1');
      for (let from = 0; from <= n; from++) expect(findNewline(bytes, from)).toBe(text.indexOf('\n', from));
      // a view that starts inside a larger buffer counts from the view's start
      const view = bytes.subarray(3);
      expect(findNewline(view, 0)).toBe(text.slice(3).indexOf('\n'));
    }
  });
});

describe('fastFloat with a delimiter', () => {
  it('accepts the delimiter right after a number and gives Number() of the token', () => {
    const end = { pos: 0 };
    for (const tok of ['1.5', '-0.25', '12345.678901', '1e5', '-2.5E-3', '7D2', '.5', '5.']) {
      const buf = new Uint8Array(Buffer.from(`${tok},9\n`, 'latin1'));
      const v = fastFloat(buf, 0, end, 44);
      expect(end.pos).toBe(tok.length);
      expect(v).toBe(Number(tok.replace(/D/, 'e')));
      // without the delimiter the ',' is not a terminator: declined, not guessed
      fastFloat(buf, 0, end);
      expect(end.pos).toBe(-1);
    }
  });
});

/** A whitespace/TSV/CSV table of `rows` rows: time plus `cols` columns of printed numbers. */
function table(rows: number, cols: number, sep: string, opts: { extra?: (i: number) => string | null } = {}): { text: string; values: string[][]; lines: number[] } {
  const rnd = generator(rows + cols);
  const out: string[] = [`# time ${Array.from({ length: cols }, (_, k) => `p${k}`).join(' ')}`];
  const values: string[][] = [];
  const lines: number[] = [];
  for (let i = 0; i < rows; i++) {
    const extra = opts.extra?.(i);
    if (extra != null) out.push(extra);
    const row = [(i * 0.002).toFixed(3)];
    for (let k = 0; k < cols; k++) {
      const x = (rnd() - 0.5) * 2000;
      row.push(k % 3 === 2 ? x.toExponential(4) : x.toFixed(k % 2 ? 5 : 3));
    }
    values.push(row);
    out.push(row.join(sep));
    lines.push(out.length);
  }
  return { text: out.join('\n') + '\n', values, lines };
}

describe('column tables: bulk path and block storage', () => {
  // 70 000 rows: more than one 65 536-row storage block.
  const N = 70_000;
  for (const [name, sep] of [
    ['blank-separated', '  '],
    ['tab-separated', '\t'],
    ['comma-separated', ', '],
  ] as const) {
    it(`${name}: every value is Number() of its token, across storage blocks`, async () => {
      const t = table(N, 4, sep, { extra: (i) => (i % 9973 === 5 ? (i % 2 ? '' : '# a comment in the data') : null) });
      const p = tmp.file(`t-${name}.txt`, t.text);
      const r = await readTable(p, { warnings: [] });
      expect(r.rows).toBe(N);
      expect(r.names).toEqual(['time', 'p0', 'p1', 'p2', 'p3']);
      for (const [k, col] of ['time', 'p0', 'p1', 'p2', 'p3'].entries()) {
        const a = r.columns.get(col)!;
        expect(a.length).toBe(N);
        let bad = -1;
        for (let i = 0; i < N; i++) if (!Object.is(a[i], Number(t.values[i]![k]))) bad = i;
        expect(bad).toBe(-1);
      }
      expect(r.time).toBe(r.columns.get('time'));
    });
  }

  it('storage: a size estimate that falls short, and gzip input (no estimate), keep every row', async () => {
    // Long rows first (the estimate is made from the first 65 536 rows), short rows after:
    // the estimated arrays fill up and the rest goes to blocks.
    const rnd = generator(11);
    const lines = ['# time x'];
    const want: number[] = [];
    const n = 300_000;
    for (let i = 0; i < n; i++) {
      const x = i < 70_000 ? (rnd() * 1e6).toFixed(9) : (rnd() * 9).toFixed(1);
      want.push(Number(x));
      lines.push(`${i} ${x}`);
    }
    const text = lines.join('\n') + '\n';
    for (const p of [tmp.file('t-short-rows.txt', text), tmp.file('t-rows.txt.gz', gzipSync(text))]) {
      const r = await readTable(p, { warnings: [] });
      expect(r.rows).toBe(n);
      const x = r.columns.get('x')!;
      expect(x.length).toBe(n);
      let bad = -1;
      for (let i = 0; i < n; i++) if (!Object.is(x[i], want[i])) bad = i;
      expect(bad).toBe(-1);
      expect(r.columns.get('time')![n - 1]).toBe(n - 1);
    }
  });

  it('requested columns only; tiny chunks give the same values', async () => {
    const t = table(3000, 5, ' ');
    const p = tmp.file('t-req.txt', t.text);
    const a = await readTable(p, { warnings: [], columns: ['p3', 'p1'] });
    const b = await readTable(p, { warnings: [], columns: ['p3', 'p1'], highWaterMark: 13 });
    expect([...a.columns.keys()].sort()).toEqual(['p1', 'p3', 'time']);
    for (const [k, col] of [
      [4, 'p3'],
      [2, 'p1'],
    ] as const) {
      expect(Array.from(a.columns.get(col)!)).toEqual(t.values.map((v) => Number(v[k])));
      expect(Array.from(b.columns.get(col)!)).toEqual(t.values.map((v) => Number(v[k])));
    }
  });

  it('a bad value deep in the table is reported at its line and column, as on the checking path', async () => {
    const t = table(N, 3, ' ');
    const row = 68_123;
    const lineText = t.values[row]!.join(' ');
    const broken = lineText.replace(t.values[row]![2]!, '4.2.1');
    const text = t.text.replace(`\n${lineText}\n`, `\n${broken}\n`);
    const column = broken.indexOf('4.2.1') + 1;
    await rejectsWith(readTable(tmp.file('t-bad.txt', text), { warnings: [] }), InputError, `:${t.lines[row]}:${column}:`, "'4.2.1'");
  });

  it('a time that does not increase, a missing and an extra column are reported', async () => {
    const t = table(N, 2, ' ');
    const row = 66_000;
    const lineText = t.values[row]!.join(' ');
    const prev = t.values[row - 1]![0]!;
    const timeBack = t.text.replace(`\n${lineText}\n`, `\n${[prev, ...t.values[row]!.slice(1)].join(' ')}\n`);
    await rejectsWith(readTable(tmp.file('t-time.txt', timeBack), { warnings: [] }), InputError, `:${t.lines[row]}:1:`, 'not greater');
    const short = t.text.replace(`\n${lineText}\n`, `\n${t.values[row]!.slice(0, 2).join(' ')}\n`);
    await rejectsWith(readTable(tmp.file('t-short.txt', short), { warnings: [] }), InputError, `:${t.lines[row]}:`, 'found end of line');
    const long = t.text.replace(`\n${lineText}\n`, `\n${lineText} 9.5\n`);
    await rejectsWith(readTable(tmp.file('t-long.txt', long), { warnings: [] }), InputError, `:${t.lines[row]}:${lineText.length + 2}:`, 'more columns');
  });
});
