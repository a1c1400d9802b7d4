import { afterAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { statSync } from 'node:fs';
import { readTable } from '../readers/index.js';
import { InputError, UsageError } from '../src/errors.js';
import { rejectsWith, tempDir } from './readers-helpers.js';

const tmp = tempDir('table');
afterAll(() => tmp.cleanup());

/** Expected values are Number() of the strings written (ECMAScript StringToNumber). */
const col = (rows: string[][], k: number) => rows.map((r) => Number(r[k]));

const ROWS = [
  ['0.000', '12.5', '-3.25', '1e-3'],
  ['0.002', '11.75', '-2.5', '2.5E+1'],
  ['0.004', '-0.125', '7', '.5'],
];

describe('column tables', () => {
  it('whitespace table with a "# name …" header line; time column found; requested columns only', async () => {
    const text = '# a free comment line\n# time pxy pxz pyz\n' + ROWS.map((r) => r.join('  ')).join('\n') + '\n';
    const path = tmp.file('p.dat', text);
    const warnings: string[] = [];
    const t = await readTable(path, { columns: ['pxz'], warnings });
    expect(t.format).toBe('table');
    expect(t.names).toEqual(['time', 'pxy', 'pxz', 'pyz']);
    expect([...t.columns.keys()]).toEqual(['pxz', 'time']);
    expect(Array.from(t.columns.get('pxz')!)).toEqual(col(ROWS, 2));
    expect(Array.from(t.time!)).toEqual(col(ROWS, 0));
    expect(t.rows).toBe(3);
    expect(t.sha256).toBe(createHash('sha256').update(text).digest('hex'));
    expect(t.bytes).toBe(statSync(path).size);
    expect(warnings).toEqual([]);
  });

  it('the header is the LAST # line with as many names as data columns', async () => {
    const text = '# time pxy pxz pyz\n# units: ps bar bar bar extra\n# t a b c\n' + ROWS.map((r) => r.join(' ')).join('\n');
    const t = await readTable(tmp.file('last.dat', text), { warnings: [] });
    expect(t.names).toEqual(['t', 'a', 'b', 'c']);
    expect(Array.from(t.time!)).toEqual(col(ROWS, 0)); // 't' is a time name
  });

  it('CSV with a plain first row of names (quoted allowed), all columns by default', async () => {
    const text = '"time_ps",Pxy, Pxz ,Pyz\r\n' + ROWS.map((r) => r.join(', ')).join('\r\n') + '\r\n';
    const t = await readTable(tmp.file('p.csv', text), { warnings: [] });
    expect(t.names).toEqual(['time_ps', 'Pxy', 'Pxz', 'Pyz']);
    expect(Array.from(t.columns.get('Pyz')!)).toEqual(col(ROWS, 3));
    expect(Array.from(t.time!)).toEqual(col(ROWS, 0));
    // case-insensitive match when unambiguous
    const u = await readTable(tmp.file('p2.csv', text), { columns: ['pxy'], warnings: [] });
    expect(Array.from(u.columns.get('Pxy')!)).toEqual(col(ROWS, 1));
  });

  it('TSV with a header row whose names contain spaces', async () => {
    const text = 'Time (ps)\tPres XY\tPres XZ\tPres YZ\n' + ROWS.map((r) => r.join('\t')).join('\n') + '\n';
    const t = await readTable(tmp.file('p.tsv', text), { columns: ['Pres XZ'], warnings: [] });
    expect(t.names).toEqual(['Time (ps)', 'Pres XY', 'Pres XZ', 'Pres YZ']);
    expect(Array.from(t.columns.get('Pres XZ')!)).toEqual(col(ROWS, 2));
    expect(Array.from(t.time!)).toEqual(col(ROWS, 0));
  });

  it('plot-directive legends name the columns; @ and & lines are comments', async () => {
    const text =
      '# generated\n@    title "Pressure"\n@    xaxis  label "Time (ps)"\n@ s0 legend "Pres-XY"\n@ s1 legend "Pres-XZ"\n@ s2 legend "Pres-YZ"\n' +
      ROWS.map((r) => r.join(' ')).join('\n') +
      '\n&\n';
    const t = await readTable(tmp.file('p.dat', text), { columns: ['Pres-YZ'], warnings: [] });
    expect(t.names).toEqual(['time', 'Pres-XY', 'Pres-XZ', 'Pres-YZ']);
    expect(Array.from(t.columns.get('Pres-YZ')!)).toEqual(col(ROWS, 3));
    expect(Array.from(t.time!)).toEqual(col(ROWS, 0));
  });

  it('no names at all: col1..colN and a warning; no time column', async () => {
    const warnings: string[] = [];
    const t = await readTable(tmp.file('bare.dat', ROWS.map((r) => r.join(' ')).join('\n')), { warnings });
    expect(t.names).toEqual(['col1', 'col2', 'col3', 'col4']);
    expect(t.time).toBeNull();
    expect(warnings[0]).toContain('no column names');
  });

  it('grows its storage past the initial capacity and trims it at the end', async () => {
    const n = 5000;
    const lines = ['time x'];
    for (let i = 0; i < n; i++) lines.push(`${i * 0.5} ${Math.sin(i).toPrecision(17)}`);
    const t = await readTable(tmp.file('long.dat', lines.join('\n')), { warnings: [] });
    expect(t.rows).toBe(n);
    const x = t.columns.get('x')!;
    expect(x.length).toBe(n);
    for (let i = 0; i < n; i += 997) expect(x[i]).toBe(Number(Math.sin(i).toPrecision(17)));
    expect(t.time![n - 1]).toBe((n - 1) * 0.5);
  });

  it('unknown requested column: UsageError listing the available names', async () => {
    const p = tmp.file('u.dat', '# time pxy\n0 1\n1 2\n');
    await rejectsWith(readTable(p, { columns: ['pzz'], warnings: [] }), UsageError, "no column named 'pzz'", 'available columns: time, pxy');
  });

  it('ragged rows, non-numbers, NaN: InputError naming file:line:column', async () => {
    const p1 = tmp.file('short.dat', '# time a b\n0 1 2\n1 3\n');
    await rejectsWith(readTable(p1, { warnings: [] }), InputError, "short.dat:3:4: expected column 3 ('b') (a number), found end of line");
    const p2 = tmp.file('long.dat', '# time a b\n0 1 2\n1 3 4 5\n');
    await rejectsWith(readTable(p2, { warnings: [] }), InputError, "short.dat".replace('short', 'long') + ":3:7: unexpected '5' after the last column");
    const p3 = tmp.file('word.dat', '# time a b\n0 1 2\n1 x 4\n');
    await rejectsWith(readTable(p3, { warnings: [] }), InputError, "word.dat:3:3: expected column 2 ('a') (a number), found 'x'");
    const p4 = tmp.file('nan.dat', '# time a b\n0 1 2\n1 nan 4\n');
    await rejectsWith(readTable(p4, { warnings: [] }), InputError, 'nan.dat:3:3', 'finite');
    const p5 = tmp.file('empty.csv', 'time,a,b\n0,1,2\n1,,3\n');
    await rejectsWith(readTable(p5, { warnings: [] }), InputError, "empty.csv:3:3: expected column 2 ('a') (a number), found ''");
    const p6 = tmp.file('fewcsv.csv', 'time,a,b\n0,1,2\n1,2\n');
    await rejectsWith(readTable(p6, { warnings: [] }), InputError, 'fewcsv.csv:3:4', "expected ',' and column 3 ('b')");
  });

  it('time must be strictly increasing: InputError naming the row', async () => {
    const p = tmp.file('time.dat', '# time a\n0 1\n0.5 2\n0.5 3\n');
    const e = await rejectsWith(readTable(p, { warnings: [] }), InputError, "time 0.5 is not greater than the previous row's time 0.5 (line 3)");
    expect((e as InputError).line).toBe(4);
    expect((e as InputError).column).toBe(1);
  });

  it('zero data rows: InputError', async () => {
    await rejectsWith(readTable(tmp.file('hdr.dat', '# only\ntime a\n'), { warnings: [] }), InputError, 'no data rows');
    await rejectsWith(readTable(tmp.file('none.dat', '# only comments\n\n'), { warnings: [] }), InputError, 'no data rows');
  });

  it('Fortran D exponents and tiny chunks', async () => {
    const text = '# time e\n1.0D-03 -1.5D+02\n2.0D-03 2.5d1\n';
    const a = await readTable(tmp.file('d.dat', text), { warnings: [] });
    expect(Array.from(a.columns.get('e')!)).toEqual([-150, 25]);
    const b = await readTable(tmp.file('d2.dat', text), { warnings: [], highWaterMark: 3 });
    expect(Array.from(b.columns.get('e')!)).toEqual([-150, 25]);
  });
});

describe('comment header written with spaces over tab-separated data', () => {
  it('takes the names from the space-separated header', async () => {
    // A common layout of simulation energy tables (common practice, no source): "# a b c" then TSV rows.
    const { writeFileSync, mkdtempSync } = await import('node:fs');
    const { join } = await import('node:path');
    const { tmpdir } = await import('node:os');
    const p = join(mkdtempSync(join(tmpdir(), 'sojourn-tbl-')), 'e.tsv');
    writeFileSync(p, '# time potential kinetic\n0.0\t-1.5\t2.25\n0.5\t-1.0\t2.0\n');
    const t = await readTable(p, { warnings: [] });
    expect(t.names).toEqual(['time', 'potential', 'kinetic']);
    expect(Array.from(t.time!)).toEqual([0, 0.5]);
    expect(Array.from(t.columns.get('kinetic')!)).toEqual([2.25, 2.0]);
  });
});
