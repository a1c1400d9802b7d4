/**
 * The gzip layer of the byte sources (readers/bytes.ts), as a decoder driven by pulls so that the
 * same code runs on the caller's thread and in the reading thread (readers/read-thread.ts).
 *
 * Input that readers/bytes.ts recognised as gzip (magic bytes 0x1f 0x8b) is inflated as a stream with pako's zlib port (low-level API: pako's `Inflate` class
 * ends at the first member and hides its input position, so members are chained here).
 * Multi-member files (as made by `cat a.gz b.gz`, bgzip or pigz) are read to the end;
 * zero bytes after the last member (tape/block padding) are ignored; any other trailing
 * bytes, bad headers, bad deflate data and CRC-32/length mismatches raise
 * InputError "gzip data corrupted (…)"; input that ends inside a member raises
 * InputError "gzip stream truncated (…)".
 */
import { ZStream, zlibInflate, zlibInflateInit2, zlibInflateReset, zlibInflateEnd } from 'pako';
import { InputError } from '../src/errors.js';

const Z_OK = 0;
const Z_STREAM_END = 1;
const Z_BUF_ERROR = -5;

/**
 * A gzip decoder driven by pulls: give it raw input with push(), take full output chunks with
 * pull() until it returns null (input used up), and call flush() and finish() at the end of the
 * input. Runs
 * the member chaining, padding and error rules of the module comment; errors are InputErrors
 * naming `name`. Output chunks are new arrays of `outChunk` bytes (the last may be shorter).
 * Synchronous, so that the same code runs on the caller's thread and in the reading thread.
 */
export class GunzipStream {
  private readonly name: string;
  private readonly size: number;
  private readonly alloc: (size: number) => Uint8Array;
  private readonly strm = new ZStream();
  /** Between members (the previous one ended; no byte of a new one consumed yet). */
  private between = false;
  /** Only zero padding may follow. */
  private padding = false;
  /** Raw bytes of earlier input chunks. */
  private consumedBefore = 0;
  private members = 0;
  private input: Uint8Array | null = null;
  private closed = false;

  /** `alloc` gives the output buffers (default: new arrays; the reading thread recycles them). */
  constructor(name: string, outChunk: number, alloc: (size: number) => Uint8Array = (n) => new Uint8Array(n)) {
    this.name = name;
    this.size = outChunk;
    this.alloc = alloc;
    const strm = this.strm;
    if (zlibInflateInit2(strm, 16 + 15) !== Z_OK) throw new Error('pako: inflateInit2 failed');
    // pako's types say ArrayBuffer; it only reads, writes and slices the array (ring buffers of
    // the reading thread are SharedArrayBuffers).
    strm.output = alloc(outChunk) as Uint8Array<ArrayBuffer>;
    strm.next_out = 0;
    strm.avail_out = outChunk;
  }

  /** Give the next raw chunk; the previous one must be used up (pull() returned null). */
  push(input: Uint8Array): void {
    if (this.input !== null) throw new Error('GunzipStream.push: the previous input is not used up');
    const strm = this.strm;
    this.input = input;
    strm.input = input;
    strm.next_in = 0;
    strm.avail_in = input.length;
  }

  /** The next full output chunk, or null when the input pushed so far is used up. */
  pull(): Uint8Array | null {
    const input = this.input;
    if (input === null) return null;
    const strm = this.strm;
    for (;;) {
      if (this.padding || this.between) {
        if (strm.avail_in === 0) return this.usedUp(input);
        const b = input[strm.next_in]!;
        if (b === 0) {
          this.padding = true;
          strm.next_in++;
          strm.avail_in--;
          continue;
        }
        if (this.padding) {
          throw this.corrupted(`unexpected data after the gzip padding at byte ${this.consumedBefore + strm.next_in}`);
        }
        if (b !== 0x1f) {
          throw this.corrupted(
            `bytes after the end of gzip member ${this.members} are not another gzip member (byte ${this.consumedBefore + strm.next_in})`,
          );
        }
        zlibInflateReset(strm);
        this.between = false;
      }
      if (strm.avail_out === 0) {
        const out = strm.output;
        strm.output = this.alloc(this.size) as Uint8Array<ArrayBuffer>;
        strm.next_out = 0;
        strm.avail_out = this.size;
        return out;
      }
      const status = zlibInflate(strm, 0);
      if (status === Z_STREAM_END) {
        this.members++;
        this.between = true;
        continue;
      }
      if (status !== Z_OK && status !== Z_BUF_ERROR) {
        throw this.corrupted(
          `${strm.msg || `zlib status ${status}`} in member ${this.members + 1}, near compressed byte ${this.consumedBefore + strm.next_in}`,
        );
      }
      if (strm.avail_out === 0) continue; // output full: more may be pending
      if (strm.avail_in === 0) return this.usedUp(input); // needs more input
      throw this.corrupted(`inflate made no progress near compressed byte ${this.consumedBefore + strm.next_in}`);
    }
  }

  /**
   * End of the input: the last (partial) output chunk, or null. Output is handed out only when
   * a buffer is full or here, so that tiny input chunks do not give tiny output chunks. Call
   * finish() after handing it out.
   */
  flush(): Uint8Array | null {
    const strm = this.strm;
    const last = strm.next_out > 0 ? strm.output.subarray(0, strm.next_out) : null;
    strm.next_out = 0;
    return last;
  }

  /** After flush(): throws "gzip stream truncated" when the input ended inside a member. */
  finish(): void {
    if (!this.between && !this.padding) {
      throw new InputError(
        this.name,
        null,
        null,
        `gzip stream truncated (input ends inside gzip member ${this.members + 1} after ${this.consumedBefore} compressed bytes; the file was probably cut short)`,
      );
    }
  }

  /** Free pako's state (idempotent). */
  close(): void {
    if (this.closed) return;
    this.closed = true;
    zlibInflateEnd(this.strm);
  }

  private usedUp(input: Uint8Array): null {
    this.consumedBefore += input.length;
    this.input = null;
    return null;
  }

  private corrupted(detail: string): InputError {
    return new InputError(this.name, null, null, `gzip data corrupted (${detail})`);
  }
}
