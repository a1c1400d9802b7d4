import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { LineCursor, fastFloat, parseNumberString, type FloatEnd } from '../readers/lines.js';
import { InputError } from '../src/errors.js';

/**
 * Reference: ECMAScript Number() (StringToNumber, correctly rounded to nearest double, ties to
 * even). Our parser must give the SAME double, not merely a close one: its fast path multiplies
 * or divides an exactly representable mantissa (< 2^53) by an exactly representable power of
 * ten (10^0..10^22), and one IEEE-754 operation on exact operands is correctly rounded
 * (Clinger 1990, "How to read floating point numbers accurately"); every other token is passed
 * to Number() itself. So the comparison below is exact (Object.is), tolerance 0 ulp.
 */
function viaCursor(token: string, delimiter = -1): number {
  const bytes = new Uint8Array(Buffer.from(token, 'latin1'));
  const cur = new LineCursor('t.txt');
  cur.delimiter = delimiter;
  cur.reset(bytes, 0, bytes.length, 1);
  const v = cur.float('value');
  cur.expectEnd('value');
  return v;
}

function viaFast(token: string): number {
  // fastFloat needs a line ending in '\n'
  const bytes = new Uint8Array(Buffer.from(token + '\n', 'latin1'));
  const end: FloatEnd = { pos: 0 };
  const v = fastFloat(bytes, 0, end);
  expect(end.pos).toBe(bytes.length - 1);
  return v;
}

const digits = (min: number, max: number) =>
  fc.array(fc.integer({ min: 0, max: 9 }), { minLength: min, maxLength: max }).map((a) => a.join(''));

/** Random decimal strings: sign, integer digits, optional fraction, optional exponent. */
const decimal = fc
  .tuple(
    fc.constantFrom('', '-', '+'),
    digits(0, 12),
    fc.option(digits(0, 12)),
    fc.option(fc.tuple(fc.constantFrom('e', 'E', 'e+', 'e-', 'E-'), fc.integer({ min: 0, max: 40 }))),
  )
  .filter(([, i, f]) => i.length + (f ?? '').length > 0)
  .map(([s, i, f, e]) => `${s}${i}${f !== null ? '.' + f : ''}${e !== null ? e[0] + e[1] : ''}`);

/** Long mantissas and extreme exponents (the Number() fallback). */
const hard = fc
  .tuple(fc.constantFrom('', '-'), digits(1, 25), digits(0, 25), fc.integer({ min: -330, max: 310 }))
  .map(([s, i, f, e]) => `${s}${i}.${f}e${e}`)
  .filter((t) => Number.isFinite(Number(t)));

describe('number parser vs Number()', () => {
  it('gives exactly Number() for random decimal strings (LineCursor.float)', () => {
    fc.assert(
      fc.property(decimal, (t) => {
        expect(Object.is(viaCursor(t), Number(t))).toBe(true);
      }),
      { numRuns: 20000 },
    );
  });

  it('gives exactly Number() for random decimal strings (fastFloat bulk path)', () => {
    fc.assert(
      fc.property(decimal, (t) => {
        expect(Object.is(viaFast(t), Number(t))).toBe(true);
      }),
      { numRuns: 20000 },
    );
  });

  it('gives exactly Number() for long mantissas and extreme exponents', () => {
    fc.assert(
      fc.property(hard, (t) => {
        expect(Object.is(viaCursor(t), Number(t))).toBe(true);
        expect(Object.is(viaFast(t), Number(t))).toBe(true);
      }),
      { numRuns: 5000 },
    );
  });

  it('round-trips random doubles printed by JavaScript (shortest round-trip form)', () => {
    // Number.prototype.toString prints the shortest string that reads back as the same double
    // (ECMAScript Number::toString), so parsing it must give the double back exactly
    // (String(-0) is "0", so -0 comes back as +0, as it does through Number()).
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), (x) => {
        const t = String(x);
        const want = Object.is(x, -0) ? 0 : x;
        expect(Object.is(viaCursor(t), want)).toBe(true);
        expect(Object.is(viaFast(t), want)).toBe(true);
      }),
      { numRuns: 20000 },
    );
  });

  it('accepts Fortran D exponents (1.5D+02 = 1.5E+02)', () => {
    // Fortran 2008 §10.7.2.3.2: in input, the exponent letter may be E or D.
    expect(viaCursor('1.5D+02')).toBe(150);
    expect(viaCursor('-2.5d-3')).toBe(-0.0025);
    expect(viaCursor('0.123456789012D+05')).toBe(Number('0.123456789012e+05'));
    expect(viaFast('1.5D+02')).toBe(150);
    expect(viaFast('7.0d0')).toBe(7);
  });

  it('keeps the sign of negative zero like Number()', () => {
    expect(Object.is(viaCursor('-0.0'), -0)).toBe(true);
    expect(Object.is(viaFast('-0.000'), -0)).toBe(true);
  });

  it('accepts ".5", "5." and a trailing CR, and stops at the CSV delimiter', () => {
    expect(viaCursor('.5')).toBe(0.5);
    expect(viaCursor('5.')).toBe(5);
    expect(viaCursor('2.25\r')).toBe(2.25);
    const bytes = new Uint8Array(Buffer.from('1.5,2.5'));
    const cur = new LineCursor('t.csv');
    cur.delimiter = 44;
    cur.reset(bytes, 0, bytes.length, 1);
    expect(cur.float('a')).toBe(1.5);
    expect(cur.pos).toBe(3);
  });
});

describe('number parser errors', () => {
  function err(token: string): InputError {
    try {
      viaCursor(token);
    } catch (e) {
      if (e instanceof InputError) return e;
      throw e;
    }
    throw new Error(`no error for ${token}`);
  }

  it('rejects NaN and infinities with file:line:column', () => {
    for (const t of ['nan', 'NaN', '-nan', 'inf', '-Infinity', '+INF']) {
      const e = err(t);
      expect(e.message).toMatch(/^t\.txt:1:1: expected value \(a finite number\), found/);
      expect(e.message).toContain('NaN and infinite values are not accepted');
    }
  });

  it('rejects malformed tokens, naming what was expected', () => {
    for (const t of ['1.2.3', '1e', '1e+', '--1', '.', '-', '1,5', '0x10', '1_000', '12abc', '*******']) {
      const e = err(t);
      expect(e.line).toBe(1);
      expect(e.column).toBe(1);
      expect(e.message).toContain('expected value');
    }
  });

  it('rejects values that overflow to infinity', () => {
    expect(err('1e400').message).toContain('out of range');
    expect(err('-2.5D+999').message).toContain('out of range');
  });

  it('reports the column of the offending token', () => {
    const bytes = new Uint8Array(Buffer.from('  1.0   x2'));
    const cur = new LineCursor('f.xyz');
    cur.reset(bytes, 0, bytes.length, 7);
    cur.float('a');
    try {
      cur.float('y coordinate');
      throw new Error('no error');
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).message).toBe("f.xyz:7:9: expected y coordinate (a number), found 'x2'");
    }
  });

  it('parseNumberString locates errors at the given column', () => {
    try {
      parseNumberString('1.0q', 'Time= value', 'a.xyz', 2, 10);
      throw new Error('no error');
    } catch (e) {
      expect((e as InputError).column).toBe(10);
      expect((e as InputError).line).toBe(2);
    }
  });

  it('fastFloat declines (pos -1) instead of guessing on bad tokens', () => {
    for (const t of ['nan', '1.2.3', '1e', '12abc', '1e400', '-']) {
      const bytes = new Uint8Array(Buffer.from(t + '\n'));
      const end: FloatEnd = { pos: 0 };
      fastFloat(bytes, 0, end);
      expect(end.pos).toBe(-1);
    }
  });
});
