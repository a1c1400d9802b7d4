/**
 * Byte sources: a file (or '-' for standard input) as an async stream of Uint8Array chunks,
 * with transparent gzip decompression and a SHA-256 of the raw bytes.
 *
 * - gzip is detected by its magic bytes 0x1f 0x8b at the start of the input, never by name.
 *   It is inflated as a stream with pako's zlib port (low-level API: pako's `Inflate` class
 *   ends at the first member and hides its input position, so members are chained here).
 *   Multi-member files (as made by `cat a.gz b.gz`, bgzip or pigz) are read to the end;
 *   zero bytes after the last member (tape/block padding) are ignored; any other trailing
 *   bytes, bad headers, bad deflate data and CRC-32/length mismatches raise
 *   InputError "gzip data corrupted (…)"; input that ends inside a member raises
 *   InputError "gzip stream truncated (…)".
 * - sha256() and rawBytes describe the raw (still compressed) bytes of the whole input. If the
 *   consumer stops early (returns from the chunk generator), the rest of the raw input is
 *   still read and hashed (not decompressed), so the digest always covers the whole file.
 *   After an error sha256() throws.
 * - Chunks handed out are plain Uint8Arrays (not Buffers) that the consumer may keep; they are
 *   never overwritten.
 */
import { createHash, type Hash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import type { Readable } from 'node:stream';
import { ZStream, zlibInflate, zlibInflateInit2, zlibInflateReset, zlibInflateEnd } from 'pako';
import { InputError } from '../src/errors.js';

export interface ByteSourceOptions {
  /** Raw read size in bytes (default 1 MiB). Small values are for tests. */
  highWaterMark?: number;
  /** Size of decompressed output chunks in bytes (default 1 MiB). */
  outputChunk?: number;
  /** Stream to read when path is '-' (default process.stdin). */
  stdin?: Readable;
}

const MiB = 1 << 20;

const Z_OK = 0;
const Z_STREAM_END = 1;
const Z_BUF_ERROR = -5;

/** Display name for messages: '-' reads as "<stdin>". */
export function displayName(path: string): string {
  return path === '-' ? '<stdin>' : path;
}

export class ByteSource {
  /** Path as given ('-' for stdin). */
  readonly path: string;
  /** Name used in error messages. */
  readonly name: string;
  /** True once the input was seen to start with the gzip magic bytes. */
  compressed = false;
  /** Raw bytes read so far (the whole file once iteration ended). */
  rawBytes = 0;
  /** Decompressed bytes handed out so far. */
  outBytes = 0;
  private readonly hwm: number;
  private readonly outChunk: number;
  private readonly stdin: Readable | undefined;
  private readonly hash: Hash = createHash('sha256');
  private digest: string | null = null;
  private started = false;
  private failed = false;

  constructor(path: string, opts: ByteSourceOptions = {}) {
    this.path = path;
    this.name = displayName(path);
    this.hwm = Math.max(1, opts.highWaterMark ?? MiB);
    this.outChunk = Math.max(64, opts.outputChunk ?? MiB);
    this.stdin = opts.stdin;
  }

  /** True when the whole raw input has been read and hashed. */
  get complete(): boolean {
    return this.digest !== null;
  }

  /** Hex SHA-256 of the raw input bytes; only after the chunk stream has ended. */
  sha256(): string {
    if (this.digest === null) {
      throw new Error(`${this.name}: sha256 is not known yet (input not fully read${this.failed ? ': reading failed' : ''})`);
    }
    return this.digest;
  }

  /**
   * The (decompressed) content as chunks. May be called once. On early return the remaining
   * raw bytes are still read and hashed (see module comment).
   */
  async *chunks(): AsyncGenerator<Uint8Array, void, undefined> {
    if (this.started) throw new Error(`${this.name}: ByteSource.chunks() may be called only once`);
    this.started = true;
    const stream: Readable =
      this.path === '-' ? (this.stdin ?? process.stdin) : createReadStream(this.path, { highWaterMark: this.hwm });
    const raw = stream[Symbol.asyncIterator]() as AsyncIterator<Uint8Array>;
    let finished = false;
    try {
      // Look at the first two bytes (they may arrive in separate tiny chunks).
      const head: Uint8Array[] = [];
      let headLen = 0;
      while (headLen < 2) {
        const r = await this.nextRaw(raw);
        if (r === null) break;
        head.push(r);
        headLen += r.length;
      }
      const first = concat(head, headLen);
      this.compressed = headLen >= 2 && first[0] === 0x1f && first[1] === 0x8b;
      if (this.compressed) {
        yield* this.inflate(first, raw);
      } else {
        if (headLen > 0) {
          this.outBytes += headLen;
          yield first;
        }
        for (;;) {
          const r = await this.nextRaw(raw);
          if (r === null) break;
          this.outBytes += r.length;
          yield r;
        }
      }
      this.digest = this.hash.digest('hex');
      finished = true;
    } catch (e) {
      this.failed = true;
      finished = true;
      throw e;
    } finally {
      if (!finished) {
        // Early return by the consumer: hash the rest so the digest covers the whole input.
        try {
          while ((await this.nextRaw(raw)) !== null) {
            /* hashing happens in nextRaw */
          }
          this.digest = this.hash.digest('hex');
        } catch {
          this.failed = true;
        }
      }
      if (this.path !== '-') stream.destroy();
    }
  }

  /**
   * After a parse error on compressed input: keep pulling (and so inflating and checking) the
   * rest of the stream from `it`; a gzip error found there is thrown instead, since the parse
   * error was most likely caused by the corrupted data. Returns normally when the rest of the
   * gzip stream is intact.
   */
  async checkRest(it: AsyncIterator<Uint8Array>): Promise<void> {
    if (!this.compressed || this.digest !== null) return;
    for (;;) {
      const r = await it.next();
      if (r.done) return;
    }
  }

  private async nextRaw(raw: AsyncIterator<Uint8Array>): Promise<Uint8Array | null> {
    let r: IteratorResult<Uint8Array>;
    try {
      r = await raw.next();
    } catch (e) {
      throw this.readError(e);
    }
    if (r.done) return null;
    const b = r.value;
    if (typeof b === 'string') throw new Error(`${this.name}: stream is in text mode; bytes expected`);
    this.hash.update(b);
    this.rawBytes += b.length;
    // Hand out plain Uint8Arrays (not Buffer) so that consumers see one array type.
    return new Uint8Array(b.buffer, b.byteOffset, b.length);
  }

  private readError(e: unknown): Error {
    const err = e as NodeJS.ErrnoException;
    const code = err && typeof err === 'object' ? err.code : undefined;
    const why =
      code === 'ENOENT'
        ? 'no such file'
        : code === 'EISDIR'
          ? 'is a directory'
          : code === 'EACCES' || code === 'EPERM'
            ? 'permission denied'
            : `cannot be read (${err instanceof Error ? err.message : String(e)})`;
    return new InputError(this.name, null, null, why);
  }

  private async *inflate(first: Uint8Array, raw: AsyncIterator<Uint8Array>): AsyncGenerator<Uint8Array, void, undefined> {
    const strm = new ZStream();
    if (zlibInflateInit2(strm, 16 + 15) !== Z_OK) throw new Error('pako: inflateInit2 failed');
    const size = this.outChunk;
    strm.output = new Uint8Array(size);
    strm.next_out = 0;
    strm.avail_out = size;
    /** Between members (the previous one ended; no byte of a new one consumed yet). */
    let between = false;
    /** Only zero padding may follow. */
    let padding = false;
    let consumedBefore = 0; // raw bytes of earlier input chunks
    let members = 0;
    let input: Uint8Array | null = first;
    try {
      while (input !== null) {
        strm.input = input;
        strm.next_in = 0;
        strm.avail_in = input.length;
        for (;;) {
          if (padding || between) {
            if (strm.avail_in === 0) break;
            const b = input[strm.next_in]!;
            if (b === 0) {
              padding = true;
              strm.next_in++;
              strm.avail_in--;
              continue;
            }
            if (padding) {
              throw this.corrupted(`unexpected data after the gzip padding at byte ${consumedBefore + strm.next_in}`);
            }
            if (b !== 0x1f) {
              throw this.corrupted(
                `bytes after the end of gzip member ${members} are not another gzip member (byte ${consumedBefore + strm.next_in})`,
              );
            }
            zlibInflateReset(strm);
            between = false;
          }
          if (strm.avail_out === 0) {
            yield this.emit(strm.output, strm.next_out);
            strm.output = new Uint8Array(size);
            strm.next_out = 0;
            strm.avail_out = size;
          }
          const status = zlibInflate(strm, 0);
          if (status === Z_STREAM_END) {
            members++;
            between = true;
            continue;
          }
          if (status !== Z_OK && status !== Z_BUF_ERROR) {
            throw this.corrupted(
              `${strm.msg || `zlib status ${status}`} in member ${members + 1}, near compressed byte ${consumedBefore + strm.next_in}`,
            );
          }
          if (strm.avail_out === 0) continue; // output full: more may be pending
          if (strm.avail_in === 0) break; // needs more input
          throw this.corrupted(`inflate made no progress near compressed byte ${consumedBefore + strm.next_in}`);
        }
        // Output is handed out only when the buffer is full (above) or at the end (below), so
        // that tiny input chunks do not produce tiny output chunks.
        consumedBefore += input.length;
        input = await this.nextRaw(raw);
      }
      if (strm.next_out > 0) yield this.emit(strm.output, strm.next_out);
      if (!between && !padding) {
        throw new InputError(
          this.name,
          null,
          null,
          `gzip stream truncated (input ends inside gzip member ${members + 1} after ${consumedBefore} compressed bytes; the file was probably cut short)`,
        );
      }
    } finally {
      zlibInflateEnd(strm);
    }
  }

  private emit(out: Uint8Array, n: number): Uint8Array {
    this.outBytes += n;
    return n === out.length ? out : out.subarray(0, n);
  }

  private corrupted(detail: string): InputError {
    return new InputError(this.name, null, null, `gzip data corrupted (${detail})`);
  }
}

function concat(parts: Uint8Array[], len: number): Uint8Array {
  if (parts.length === 1) return parts[0]!;
  const out = new Uint8Array(len);
  let o = 0;
  for (const p of parts) {
    out.set(p, o);
    o += p.length;
  }
  return out;
}

/** Open a path ('-' = stdin) as a ByteSource. Nothing is read until chunks() is iterated. */
export function openBytes(path: string, opts: ByteSourceOptions = {}): ByteSource {
  return new ByteSource(path, opts);
}
