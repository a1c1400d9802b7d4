/**
 * Line splitting over byte chunks and byte-level number parsing.
 *
 * Design: a format parser is a synchronous per-line state machine (a LineHandler). The async
 * generator `splitLines` pulls byte chunks, cuts them into lines with Uint8Array.indexOf(10)
 * and calls the handler for each line without creating strings; it yields only when the
 * handler reports a completed item (a frame), so the async machinery costs one await per
 * chunk and one yield per frame, never one per line. The per-chunk line loop is a plain
 * synchronous function (runLines), so V8 optimises it like any hot loop.
 *
 * A handler may also offer `bulk`, a fused fast path that parses many well-formed lines in one
 * pass over the bytes (the XYZ reader uses it for atom rows: finding the '\n' with indexOf and
 * then scanning the same bytes again costs as much as the number parsing). Anything unusual
 * makes bulk stop at that line, which then goes through `line` and its checks and messages, so
 * both paths accept exactly the same input and give the same values.
 *
 * Lines: '\n' ends a line; a '\r' just before it is dropped (CRLF files read like LF files).
 * A last line without a final '\n' is still a line. Line numbers are 1-based and count lines
 * of the decompressed text.
 *
 * Numbers (LineCursor.float): optional sign, digits, optional '.', digits, optional exponent
 * introduced by e, E, d or D (Fortran double-precision exponents are accepted) with an
 * optional sign and at least one digit. At least one mantissa digit is required (".5" and
 * "5." are fine). The token must be followed by a blank (space, tab, CR), the end of the line
 * or of the field, or the table delimiter. Values are exactly what Number() gives for the same
 * token (with D read as e): the fast path is exact (Clinger): when the decimal mantissa is
 * below 2^53 and |power of ten| <= 22, one IEEE multiply or divide by an exactly representable
 * power of ten rounds correctly; anything else goes through Number() on the token text.
 * NaN, Inf, Infinity, values overflowing to ±Infinity and malformed tokens raise InputError
 * with file:line:column and what was expected.
 */
import { InputError } from '../src/errors.js';

/**
 * The longest line accepted, in bytes (1 MiB). No line of a trajectory or table needs more; a
 * longer one is corrupt or not text, and is an InputError naming file and line instead of a
 * buffer that grows until memory runs out (common practice, no source).
 */
export const MAX_LINE_BYTES = 1 << 20;

/** A synchronous line-by-line parser. */
export interface LineHandler<T> {
  /** The input's name for messages (the too-long-line error names it). */
  readonly file?: string;
  /**
   * Handle one line: bytes buf[start, end), without the '\n' and without a '\r' just before
   * it. `buf` is only valid during the call. Return a completed item or null. `st.base + start`
   * is the byte offset of the line in the text (for handlers that index frames).
   */
  line(buf: Uint8Array, start: number, end: number, lineNo: number, st: LineState<T>): T | null;
  /**
   * End of input. `lines` is the number of lines seen. When the last line had no '\n' and
   * the handler threw an InputError on it, `brokenLastLine` carries that error (the line was
   * probably cut off) and the handler should treat its current item as truncated.
   * May return one last item. `unterminated` is true when the last line had no '\n' and `line`
   * accepted it: if the file was cut short, that line may have lost its end (for example the
   * last digits of a number) while still parsing, so a handler that used it should say so.
   */
  finish(lines: number, brokenLastLine: InputError | null, unterminated: boolean): T | null;
  /**
   * Optional fast path over many lines at once (XYZ atom rows). `buf[pos]` starts a line and
   * every line starting before `limit` ends with a '\n' before `limit`, so the handler may scan
   * up to the next '\n' without bounds checks. Consume whole lines from `pos` and return the
   * position after the last one consumed (return `pos` to decline, e.g. on anything unusual:
   * that line then goes through `line`, which reports errors). Add the lines consumed to
   * st.lineNo; after a line that completes an item, store it in st.item and return at once.
   */
  bulk?(buf: Uint8Array, pos: number, limit: number, st: LineState<T>): number;
}

/** Line counter and completed item shared between the driver and a handler's bulk path. */
export interface LineState<T> {
  /** Lines seen so far (1-based number of the last line handled). */
  lineNo: number;
  item: T | null;
  /** Byte offset in the whole text of buf[0] for the buffer being handled. */
  base: number;
}

/** Where splitLines starts: lines and bytes of the text that come before its first chunk. */
export interface LineStart {
  /** Lines before the first chunk (the first line handled gets number lineNo + 1). */
  lineNo: number;
  /** Byte offset in the whole text of the first chunk's first byte. */
  offset: number;
}

/** Optional settings of splitLines. */
export interface SplitLinesOptions {
  /** Where the text starts (default: line 0, offset 0). */
  from?: LineStart;
  /**
   * Called with each chunk once splitLines is done with it (it keeps no reference: a pending
   * line is copied), so that the chunk's memory may be reused (ByteSource.release).
   */
  release?: (chunk: Uint8Array) => void;
}

const EMPTY = new Uint8Array(0);

/**
 * Position of the first '\n' in buf at or after `from`, or -1. Node's Buffer search (native
 * memchr) is applied to the plain Uint8Array: about 10 ns per line on Node 20 here, where
 * Uint8Array.prototype.indexOf costs about 60 ns per call (measured on 200 MB of XYZ text,
 * 4.9 M lines). A check at load time falls back to the standard method should Buffer's ever
 * refuse a view that is not a Buffer.
 */
export const findNewline: (buf: Uint8Array, from: number) => number = (() => {
  const native = Buffer.prototype.indexOf as (this: Uint8Array, v: number, from: number) => number;
  try {
    const probe = new Uint8Array([65, 10, 66, 10]);
    if (native.call(probe, 10, 2) === 3 && native.call(probe, 10, 4) === -1) return (buf, from) => native.call(buf, 10, from);
  } catch {
    /* fall through */
  }
  return (buf, from) => buf.indexOf(10, from);
})();

/**
 * Feed the lines of a chunk stream to a handler, yielding each completed item.
 *
 * `onHandlerError`, if given, is awaited when the handler throws, before the error is
 * rethrown; it may throw a different error instead (the gzip layer uses this to report a
 * corrupted stream rather than the parse error that the corrupted bytes caused). The chunk
 * iterator is returned (closed) in every case.
 */
export async function* splitLines<T>(
  chunks: AsyncIterator<Uint8Array>,
  handler: LineHandler<T>,
  onHandlerError?: (err: unknown) => Promise<void>,
  options: SplitLinesOptions = {},
): AsyncGenerator<T, void, undefined> {
  const from = options.from;
  const release = options.release;
  const st: LineState<T> = { lineNo: from?.lineNo ?? 0, item: null, base: 0 };
  /** The chunk handled last, to hand to `release` before the next is asked for. */
  let done: Uint8Array | null = null;
  /** Offset of the next chunk's first byte; offset of the pending (carried) line's first byte. */
  let consumed = from?.offset ?? 0;
  let carryBase = 0;
  const hasBulk = typeof handler.bulk === 'function';
  let carry: Uint8Array = EMPTY;
  let carryLen = 0;
  let closed = false;
  try {
    for (;;) {
      if (done !== null && release !== undefined) release(done);
      done = null;
      const r = await chunks.next();
      if (r.done) break;
      const chunk = r.value;
      done = chunk;
      const n = chunk.length;
      const chunkBase = consumed;
      consumed += n;
      let pos = 0;
      if (carryLen > 0) {
        const nl = findNewline(chunk, 0);
        if ((nl < 0 ? carryLen + n : carryLen + nl) > MAX_LINE_BYTES) {
          const e = lineTooLong(handler, st.lineNo + 1);
          if (onHandlerError) await onHandlerError(e);
          throw e;
        }
        if (nl < 0) {
          // The whole chunk belongs to the pending line.
          carry = grow(carry, carryLen + n);
          carry.set(chunk, carryLen);
          carryLen += n;
          continue;
        }
        carry = grow(carry, carryLen + nl + 1);
        carry.set(chunk.subarray(0, nl + 1), carryLen);
        const len = carryLen + nl + 1;
        carryLen = 0;
        st.base = carryBase;
        try {
          runLines(handler, carry, 0, len, 0, st);
        } catch (e) {
          if (onHandlerError) await onHandlerError(e);
          throw e;
        }
        if (st.item !== null) {
          const item = st.item;
          st.item = null;
          yield item;
        }
        pos = nl + 1;
      }
      const limit = hasBulk ? chunk.lastIndexOf(10) + 1 : 0;
      st.base = chunkBase;
      while (pos < n) {
        try {
          pos = runLines(handler, chunk, pos, n, limit, st);
        } catch (e) {
          if (onHandlerError) await onHandlerError(e);
          throw e;
        }
        if (st.item === null) break;
        const item = st.item;
        st.item = null;
        yield item;
      }
      if (pos < n) {
        if (n - pos > MAX_LINE_BYTES) {
          const e = lineTooLong(handler, st.lineNo + 1);
          if (onHandlerError) await onHandlerError(e);
          throw e;
        }
        carry = grow(carry, n - pos);
        carry.set(chunk.subarray(pos), 0);
        carryLen = n - pos;
        carryBase = chunkBase + pos;
      }
    }
    closed = true;
    let broken: InputError | null = null;
    let unterminated = false;
    if (carryLen > 0) {
      let end = carryLen;
      if (carry[end - 1] === 13) end--;
      st.lineNo++;
      st.base = carryBase;
      try {
        const item = handler.line(carry, 0, end, st.lineNo, st);
        unterminated = true;
        if (item !== null) yield item;
      } catch (e) {
        if (!(e instanceof InputError)) throw e;
        broken = e;
      }
    }
    let last: T | null;
    try {
      last = handler.finish(st.lineNo, broken, unterminated);
    } catch (e) {
      if (onHandlerError) await onHandlerError(e);
      throw e;
    }
    if (last !== null) yield last;
  } finally {
    if (!closed && chunks.return) await chunks.return(undefined);
  }
}

/**
 * Feed the complete lines of buf[pos, n) to the handler until one completes an item (stored
 * in st.item) or no complete line is left. Returns the position after the last line fed.
 * Lines starting before `limit` may go through the handler's bulk path (limit 0: never).
 * Synchronous, so that the per-line loop runs in plain optimised code.
 */
function runLines<T>(handler: LineHandler<T>, buf: Uint8Array, pos: number, n: number, limit: number, st: LineState<T>): number {
  for (;;) {
    if (pos < limit) {
      pos = handler.bulk!(buf, pos, limit, st);
      if (st.item !== null) return pos;
    }
    const nl = findNewline(buf, pos);
    if (nl < 0 || nl >= n) return pos;
    if (nl - pos > MAX_LINE_BYTES) throw lineTooLong(handler, st.lineNo + 1);
    const end = nl > pos && buf[nl - 1] === 13 ? nl - 1 : nl;
    const item = handler.line(buf, pos, end, ++st.lineNo, st);
    pos = nl + 1;
    if (item !== null) {
      st.item = item;
      return pos;
    }
  }
}

/** The error for line `lineNo` longer than MAX_LINE_BYTES. */
function lineTooLong<T>(handler: LineHandler<T>, lineNo: number): InputError {
  return new InputError(
    handler.file ?? '<input>',
    lineNo,
    null,
    `line ${lineNo} is longer than ${MAX_LINE_BYTES / (1 << 20)} MiB without a line break: no line of a trajectory or table is that long (a corrupt or binary file?)`,
  );
}

function grow(buf: Uint8Array, need: number): Uint8Array {
  if (buf.length >= need) return buf;
  let cap = Math.max(256, buf.length * 2);
  while (cap < need) cap *= 2;
  const b = new Uint8Array(cap);
  b.set(buf);
  return b;
}

/** Exact powers of ten 10^0 … 10^22 (all exactly representable as doubles). */
const POW10 = new Float64Array(23);
for (let i = 0, p = 1; i <= 22; i++, p *= 10) POW10[i] = p;

const TWO53 = 9007199254740992;

/** Where fastFloat stopped: the byte after the number, or -1 when it declined. */
export interface FloatEnd {
  pos: number;
}

/**
 * Fast number parser for bulk paths: same grammar and same values as LineCursor.float, but it
 * relies on the line ending with '\n' (no bounds checks) and reports nothing: on anything it
 * does not accept (malformed token, NaN, overflow, a terminator other than blank/CR/LF or
 * `delim`) it sets end.pos = -1 and the caller hands the line to the checking path. Leading
 * spaces and tabs are skipped. `delim` (default none) is an extra byte accepted right after
 * the number, like LineCursor.delimiter (',' for CSV tables).
 */
export function fastFloat(buf: Uint8Array, p: number, end: FloatEnd, delim = -1): number {
  // Common case only (no exponent, short mantissa), kept small so that V8 inlines it.
  let c = buf[p]!;
  while (c === 32 || c === 9) c = buf[++p]!;
  const start = p;
  if (c === 45 || c === 43) c = buf[++p]!;
  const d0 = p;
  let m = 0;
  while (c >= 48 && c <= 57) {
    m = m * 10 + (c - 48);
    c = buf[++p]!;
  }
  let nd = p - d0;
  let scale = 0;
  if (c === 46) {
    const f0 = ++p;
    c = buf[p]!;
    while (c >= 48 && c <= 57) {
      m = m * 10 + (c - 48);
      c = buf[++p]!;
    }
    scale = f0 - p;
    nd -= scale;
  }
  if (nd === 0 || !(c === 32 || c === 10 || c === 13 || c === 9 || c === delim) || m >= TWO53 || scale < -22) {
    return fullFloat(buf, start, end, delim);
  }
  end.pos = p;
  const v = m / POW10[-scale]!;
  return buf[start] === 45 ? -v : v;
}

/** fastFloat's general case (exponents, long mantissas, rejects), from the token start. */
function fullFloat(buf: Uint8Array, p: number, end: FloatEnd, delim: number): number {
  let c = buf[p]!;
  while (c === 32 || c === 9) c = buf[++p]!;
  const start = p;
  let neg = false;
  if (c === 45) {
    neg = true;
    c = buf[++p]!;
  } else if (c === 43) {
    c = buf[++p]!;
  }
  let m = 0;
  let nd = 0;
  while (c >= 48 && c <= 57) {
    m = m * 10 + (c - 48);
    nd++;
    c = buf[++p]!;
  }
  let scale = 0;
  if (c === 46) {
    c = buf[++p]!;
    const f0 = p;
    while (c >= 48 && c <= 57) {
      m = m * 10 + (c - 48);
      c = buf[++p]!;
    }
    scale = f0 - p;
    nd -= scale;
  }
  if (nd === 0) {
    end.pos = -1;
    return 0;
  }
  let e = 0;
  const lc = c | 0x20;
  if (lc === 101 || lc === 100) {
    c = buf[++p]!;
    let eneg = false;
    if (c === 45) {
      eneg = true;
      c = buf[++p]!;
    } else if (c === 43) {
      c = buf[++p]!;
    }
    const e0 = p;
    while (c >= 48 && c <= 57) {
      if (e < 100000) e = e * 10 + (c - 48);
      c = buf[++p]!;
    }
    if (p === e0) {
      end.pos = -1;
      return 0;
    }
    if (eneg) e = -e;
  }
  if (!(c === 32 || c === 10 || c === 13 || c === 9 || c === delim)) {
    end.pos = -1;
    return 0;
  }
  end.pos = p;
  const x = e + scale;
  if (m < TWO53 && x >= -22 && x <= 22) {
    const v = x >= 0 ? m * POW10[x]! : m / POW10[-x]!;
    return neg ? -v : v;
  }
  const v = numberFromBytes(buf, start, p);
  if (!Number.isFinite(v)) end.pos = -1;
  return v;
}

/** Number() of the token buf[start, end) with Fortran D exponents read as E. */
function numberFromBytes(buf: Uint8Array, start: number, end: number): number {
  let s = '';
  for (let i = start; i < end; i++) {
    const c = buf[i]!;
    s += c === 100 || c === 68 ? 'e' : String.fromCharCode(c);
  }
  return Number(s);
}

/**
 * Bytes buf[start, end) decoded as UTF-8 (text from input files: labels, names, messages);
 * malformed sequences become U+FFFD.
 */
export function utf8(buf: Uint8Array, start: number, end: number): string {
  return Buffer.from(buf.buffer, buf.byteOffset + start, end - start).toString('utf8');
}

/** Text of bytes buf[start, end) (Latin-1; the formats read here are ASCII). */
export function latin1(buf: Uint8Array, start: number, end: number): string {
  if (end - start < 64) {
    let s = '';
    for (let i = start; i < end; i++) s += String.fromCharCode(buf[i]!);
    return s;
  }
  return Buffer.from(buf.buffer, buf.byteOffset + start, end - start).toString('latin1');
}

function isBlank(c: number): boolean {
  return c === 32 || c === 9 || c === 13;
}

/**
 * A cursor over one line of bytes, with token and number parsing. One instance is reused for
 * every line of a file (set with `reset`). Errors name file:line:column (1-based column of
 * the byte where the offending token starts).
 */
export class LineCursor {
  readonly file: string;
  buf: Uint8Array = EMPTY;
  /** Current byte position. */
  pos = 0;
  /** End of the region being parsed (the line, or a fixed-width field). */
  end = 0;
  /** Start of the line (for column numbers). */
  lineStart = 0;
  /** End of the whole line. */
  lineEnd = 0;
  lineNo = 0;
  /** Extra byte accepted right after a number as a delimiter (',' for CSV), or -1. */
  delimiter = -1;

  constructor(file: string) {
    this.file = file;
  }

  reset(buf: Uint8Array, start: number, end: number, lineNo: number): void {
    this.buf = buf;
    this.pos = start;
    this.end = end;
    this.lineStart = start;
    this.lineEnd = end;
    this.lineNo = lineNo;
  }

  /** 1-based column of byte position p. */
  column(p: number = this.pos): number {
    return p - this.lineStart + 1;
  }

  /** Skip spaces, tabs and CRs. */
  skipBlanks(): void {
    const buf = this.buf;
    const end = this.end;
    let p = this.pos;
    while (p < end && isBlank(buf[p]!)) p++;
    this.pos = p;
  }

  /** True when only blanks remain (moves pos past them). */
  atEnd(): boolean {
    this.skipBlanks();
    return this.pos >= this.end;
  }

  /** True when the whole line is blank. */
  static isBlankLine(buf: Uint8Array, start: number, end: number): boolean {
    for (let p = start; p < end; p++) if (!isBlank(buf[p]!)) return false;
    return true;
  }

  /**
   * Skip blanks, then move over one token (up to the next blank, or the delimiter).
   * Returns the token's start; the token is buf[start, this.pos). Throws when no token is
   * left, naming `what` was expected.
   */
  token(what: string): number {
    const buf = this.buf;
    const end = this.end;
    const delim = this.delimiter;
    let p = this.pos;
    while (p < end && isBlank(buf[p]!)) p++;
    if (p >= end) throw this.error(p, `expected ${what}, found end of line`);
    const start = p;
    let c: number;
    while (p < end && !isBlank((c = buf[p]!)) && c !== delim) p++;
    if (p === start) throw this.error(p, `expected ${what}, found '${String.fromCharCode(buf[p]!)}'`);
    this.pos = p;
    return start;
  }

  /** Count the blank-separated tokens from pos to the end (does not move pos). */
  countTokens(): number {
    const buf = this.buf;
    const end = this.end;
    let p = this.pos;
    let n = 0;
    for (;;) {
      while (p < end && isBlank(buf[p]!)) p++;
      if (p >= end) return n;
      n++;
      while (p < end && !isBlank(buf[p]!)) p++;
    }
  }

  /** Throw unless only blanks remain. */
  expectEnd(what: string): void {
    this.skipBlanks();
    if (this.pos < this.end) {
      const s = this.pos;
      const e = this.tokenEnd(s);
      throw this.error(s, `unexpected '${latin1(this.buf, s, e)}' after ${what}`);
    }
  }

  /** End of the blank-delimited token starting at p (limited to 40 bytes for messages). */
  tokenEnd(p: number): number {
    const buf = this.buf;
    const end = Math.min(this.end, p + 40);
    while (p < end && !isBlank(buf[p]!) && buf[p] !== this.delimiter) p++;
    return p;
  }

  error(p: number, message: string): InputError {
    return new InputError(this.file, this.lineNo, this.column(p), message);
  }

  /**
   * Parse a floating-point number (see the module comment for the grammar). Leading blanks
   * are skipped. `what` names the expected value in error messages (e.g. "x coordinate").
   */
  float(what: string): number {
    const buf = this.buf;
    const end = this.end;
    let p = this.pos;
    let c = 0;
    while (p < end && ((c = buf[p]!) === 32 || c === 9 || c === 13)) p++;
    if (p >= end) throw this.error(p, `expected ${what} (a number), found end of line`);
    const start = p;
    let neg = false;
    if (c === 45) {
      neg = true;
      p++;
    } else if (c === 43) {
      p++;
    }
    let m = 0;
    let nd = 0;
    let scale = 0;
    while (p < end && (c = buf[p]! - 48) >= 0 && c <= 9) {
      m = m * 10 + c;
      p++;
      nd++;
    }
    if (p < end && buf[p] === 46) {
      p++;
      while (p < end && (c = buf[p]! - 48) >= 0 && c <= 9) {
        m = m * 10 + c;
        p++;
        nd++;
        scale--;
      }
    }
    if (nd === 0) throw this.badNumber(start, what);
    let e = 0;
    if (p < end) {
      c = buf[p]! | 0x20;
      if (c === 101 || c === 100) {
        p++;
        let eneg = false;
        if (p < end && ((c = buf[p]!) === 45 || c === 43)) {
          eneg = c === 45;
          p++;
        }
        let ed = 0;
        while (p < end && (c = buf[p]! - 48) >= 0 && c <= 9) {
          if (e < 100000) e = e * 10 + c;
          p++;
          ed++;
        }
        if (ed === 0) throw this.badNumber(start, what);
        if (eneg) e = -e;
      }
      if (p < end) {
        c = buf[p]!;
        if (c !== 32 && c !== 9 && c !== 13 && c !== this.delimiter) throw this.badNumber(start, what);
      }
    }
    this.pos = p;
    const x = e + scale;
    let v: number;
    if (m < TWO53 && x >= -22 && x <= 22) {
      v = x >= 0 ? m * POW10[x]! : m / POW10[-x]!;
    } else {
      v = numberFromBytes(buf, start, p);
      if (!Number.isFinite(v)) {
        throw this.error(start, `${what} '${latin1(buf, start, p)}' is out of range (overflows to infinity)`);
      }
      return v;
    }
    return neg ? -v : v;
  }

  /**
   * Parse a number occupying the fixed-width field [from, to) of the line (PDB columns,
   * 0-based, end exclusive). Blanks around the number are allowed; a blank field is an error.
   */
  fieldFloat(from: number, to: number, what: string): number {
    const ls = this.lineStart;
    const saveEnd = this.end;
    const a = ls + from;
    const b = Math.min(ls + to, this.lineEnd);
    const w = `${what} in columns ${from + 1}-${to}`;
    if (a >= b) throw this.error(Math.min(a, this.lineEnd), `expected ${w} (a number), found end of line`);
    this.pos = a;
    this.end = b;
    try {
      if (this.atEnd()) throw this.error(a, `expected ${w} (a number), found a blank field`);
      const v = this.float(w);
      if (!this.atEnd()) throw this.badNumber(a, w, b);
      return v;
    } finally {
      this.end = saveEnd;
    }
  }

  private badNumber(start: number, what: string, limit?: number): InputError {
    const buf = this.buf;
    let e = start;
    const stop = Math.min(limit ?? this.end, start + 40);
    while (e < stop && !isBlank(buf[e]!) && buf[e] !== this.delimiter) e++;
    if (limit !== undefined) {
      // fixed-width field: show the whole field
      e = stop;
      while (e > start && isBlank(buf[e - 1]!)) e--;
    }
    const tok = latin1(buf, start, e);
    const bare = tok.replace(/^[+-]/, '').toLowerCase();
    if (bare === 'nan' || bare.startsWith('inf') || bare === '-nan' || bare === 'nanq' || bare === 'nans') {
      return this.error(start, `expected ${what} (a finite number), found '${tok}' (NaN and infinite values are not accepted)`);
    }
    return this.error(start, `expected ${what} (a number), found '${tok}'`);
  }

  /**
   * Parse an unsigned decimal integer token (leading '+' allowed). Throws with `what` when
   * the token is not one or exceeds 2^31-1.
   */
  uint(what: string): number {
    const start = this.token(what);
    const buf = this.buf;
    let p = start;
    if (buf[p] === 43) p++;
    let v = 0;
    let nd = 0;
    let c: number;
    while (p < this.pos && (c = buf[p]! - 48) >= 0 && c <= 9) {
      v = v * 10 + c;
      p++;
      nd++;
    }
    if (nd === 0 || p !== this.pos) {
      throw this.error(start, `expected ${what} (a non-negative integer), found '${latin1(buf, start, this.pos)}'`);
    }
    if (v > 2147483647) throw this.error(start, `${what} ${latin1(buf, start, this.pos)} is too large`);
    return v;
  }
}

/**
 * Parse a whole string as a number with the same grammar and checks as LineCursor.float
 * (used for values in XYZ comment lines and tests). `file`, `line` and `column` locate it
 * for errors.
 */
export function parseNumberString(text: string, what: string, file: string, line: number, column: number): number {
  const bytes = new Uint8Array(Buffer.from(text, 'latin1'));
  const cur = new LineCursor(file);
  cur.reset(bytes, 0, bytes.length, line);
  cur.lineStart = 1 - column; // so that cur.column(0) === column
  const v = cur.float(what);
  cur.expectEnd(what);
  return v;
}
