/**
 * Byte sources: a file (or '-' for standard input) as an async stream of Uint8Array chunks,
 * with transparent gzip decompression and a SHA-256 of the raw bytes.
 *
 * - gzip is detected by its magic bytes 0x1f 0x8b at the start of the input, never by name, and
 *   inflated as a stream by readers/gunzip.ts (multi-member files, padding and the errors it
 *   raises are described there).
 * - sha256() and rawBytes describe the raw (still compressed) bytes of the whole input. If the
 *   consumer stops early (returns from the chunk generator), the rest of the raw input is
 *   still read and hashed (not decompressed), so the digest always covers the whole file.
 *   After an error sha256() throws. With `hash: false` nothing is hashed, an early stop reads
 *   nothing more, and sha256() throws (for readers whose caller knows the digest already).
 * - `start`/`end` read a byte range of a file as plain text (no gzip detection): a worker
 *   thread that was told where its frames start (readers/scan.ts) reads only its share.
 * - Reading thread: for a file of at least 4 MiB, when this is the main thread and the machine
 *   has two or more cores, the reading, hashing and inflating run in a helper thread
 *   (readers/read-thread.ts) that hands the chunks over by transfer (no copy), so that the
 *   caller's thread only parses. At most 4 chunks wait in the hand-over queue; the helper
 *   blocks (Atomics.wait) until the caller takes one, so memory stays bounded whatever the
 *   file size or compression ratio. Chunks, messages, errors and the digest are the same as
 *   on the caller's thread (the same GunzipStream code runs in both). Not used for standard
 *   input, inside worker threads (their cores are taken already), or when running from the
 *   TypeScript sources (the helper needs the compiled JavaScript); `thread` forces it.
 *   The helper fills a ring of 8 shared buffers (SharedArrayBuffer); release(chunk), called by
 *   a consumer done with a chunk (splitLines does), marks its slot free in a shared word, so
 *   the same memory is used again instead of fresh pages for every chunk (first use of fresh
 *   pages is costly, on virtual machines especially). When no slot is free (a consumer that
 *   keeps chunks) the helper hands over a new buffer instead. Nothing is ever transferred out
 *   of the caller's thread: detaching an ArrayBuffer there would switch off a V8 fast path for
 *   every typed array of that thread (measured: the rdf command's analysis 18 % slower).
 * - Chunks handed out are plain Uint8Arrays (not Buffers) that the consumer may keep; they are
 *   never overwritten.
 */
import { createHash, type Hash } from 'node:crypto';
import { createReadStream, existsSync, statSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import type { Readable } from 'node:stream';
import { fileURLToPath } from 'node:url';
import { Worker, isMainThread } from 'node:worker_threads';
import { InputError } from '../src/errors.js';
import { GunzipStream } from './gunzip.js';

export interface ByteSourceOptions {
  /** Raw read size in bytes (default 1 MiB). Small values are for tests. */
  highWaterMark?: number;
  /** Size of decompressed output chunks in bytes (default 1 MiB). */
  outputChunk?: number;
  /** Stream to read when path is '-' (default process.stdin). */
  stdin?: Readable;
  /** First raw byte to read (default 0); a file only. Input read from an offset is plain text. */
  start?: number;
  /** Raw byte offset to stop before (default: the end of the file); a file only. */
  end?: number;
  /** Hash the raw bytes (default true); see the module comment. */
  hash?: boolean;
  /**
   * Read in a helper thread: true (required: an Error when the compiled helper is missing),
   * false, or 'auto' (default; see the module comment).
   */
  thread?: boolean | 'auto';
  /** The helper thread's script (tests; default read-thread.js next to this module). */
  threadScript?: string | URL;
}

const MiB = 1 << 20;
/** Files smaller than this are read on the caller's thread (starting a thread costs ~30 ms). */
const THREAD_MIN_BYTES = 4 * MiB;
/** Chunks the helper thread may hand over before the consumer takes them. */
const THREAD_QUEUE = 4;

/** Display name for messages: '-' reads as "<stdin>". */
export function displayName(path: string): string {
  return path === '-' ? '<stdin>' : path;
}

/** The InputError for a failed read (no such file, a directory, …) from its errno code. */
export function readFailure(name: string, code: string | undefined, message: string): InputError {
  const why =
    code === 'ENOENT'
      ? 'no such file'
      : code === 'EISDIR'
        ? 'is a directory'
        : code === 'EACCES' || code === 'EPERM'
          ? 'permission denied'
          : `cannot be read (${message})`;
  return new InputError(name, null, null, why);
}

/** Messages from the reading thread (readers/read-thread.ts). */
export type ReadThreadMessage =
  /** `slot` ≥ 0: the chunk lies in ring buffer `slot` (shared); -1: a transferred buffer. */
  | { type: 'chunk'; buffer: ArrayBufferLike; slot: number; offset: number; length: number; raw: number; compressed: boolean }
  | { type: 'end'; digest: string | null; raw: number; compressed: boolean }
  | { type: 'error'; input: boolean; code?: string; file?: string; line?: number | null; column?: number | null; message: string };

/** What the reading thread is told (workerData). */
export interface ReadThreadData {
  kind: 'sojourn-read';
  path: string;
  name: string;
  hwm: number;
  outChunk: number;
  start: number;
  end: number | null;
  hash: boolean;
  /** [0] chunks handed over and not yet taken; [1] command: 0 run, 1 stop output, 2 abort. */
  control: SharedArrayBuffer;
  queue: number;
  /** One word per ring slot: 1 while its chunk is with the consumer, 0 once released. */
  slots: SharedArrayBuffer;
}

/** Ring buffers of the reading thread. */
const THREAD_SLOTS = 8;

function defaultThreadScript(): string | null {
  const here = fileURLToPath(import.meta.url);
  if (!here.endsWith('.js')) return null;
  const p = fileURLToPath(new URL('./read-thread.js', import.meta.url));
  return existsSync(p) ? p : null;
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
  /** True when the reading thread was used. */
  threaded = false;
  private readonly hwm: number;
  private readonly outChunk: number;
  private readonly stdin: Readable | undefined;
  private readonly start: number;
  private readonly end: number | undefined;
  private readonly hashing: boolean;
  private readonly thread: boolean | 'auto';
  private readonly threadScript: string | URL | undefined;
  private readonly hash: Hash | null;
  private digest: string | null = null;
  private started = false;
  private failed = false;
  /** Reading thread: the slot words, and the ring slot of each chunk handed out. */
  private slotWords: Int32Array | null = null;
  private readonly slotOf = new WeakMap<Uint8Array, number>();

  constructor(path: string, opts: ByteSourceOptions = {}) {
    this.path = path;
    this.name = displayName(path);
    this.hwm = Math.max(1, opts.highWaterMark ?? MiB);
    this.outChunk = Math.max(64, opts.outputChunk ?? MiB);
    this.stdin = opts.stdin;
    this.start = Math.max(0, opts.start ?? 0);
    this.end = opts.end;
    if ((this.start > 0 || this.end !== undefined) && path === '-') throw new Error('ByteSource: start/end need a file, not stdin');
    this.hashing = opts.hash ?? true;
    this.hash = this.hashing ? createHash('sha256') : null;
    this.thread = opts.thread ?? 'auto';
    this.threadScript = opts.threadScript;
  }

  /** True when the whole raw input has been read and hashed. */
  get complete(): boolean {
    return this.digest !== null;
  }

  /** Hex SHA-256 of the raw input bytes; only after the chunk stream has ended. */
  sha256(): string {
    if (!this.hashing) throw new Error(`${this.name}: sha256 was not computed (hash: false)`);
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
    const script = this.threadScriptToUse();
    if (script !== null) {
      this.threaded = true;
      yield* this.threadChunks(script);
      return;
    }
    const stream: Readable =
      this.path === '-'
        ? (this.stdin ?? process.stdin)
        : createReadStream(this.path, {
            highWaterMark: this.hwm,
            start: this.start,
            ...(this.end !== undefined ? { end: this.end - 1 } : {}),
          });
    const raw = stream[Symbol.asyncIterator]() as AsyncIterator<Uint8Array>;
    let finished = false;
    try {
      if (this.end !== undefined && this.end <= this.start) {
        // An empty range: createReadStream cannot express it.
      } else if (this.start > 0 || this.end !== undefined) {
        // A byte range of a file: plain text.
        for (;;) {
          const r = await this.nextRaw(raw);
          if (r === null) break;
          this.outBytes += r.length;
          yield r;
        }
      } else {
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
      }
      if (this.hash !== null) this.digest = this.hash.digest('hex');
      finished = true;
    } catch (e) {
      this.failed = true;
      finished = true;
      throw e;
    } finally {
      if (!finished && this.hash !== null) {
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

  /**
   * The consumer is done with `chunk` (as handed out by chunks()) and keeps no view of its
   * memory: the reading thread may fill it again. Other chunks are left alone.
   */
  release(chunk: Uint8Array): void {
    const words = this.slotWords;
    const slot = words === null ? undefined : this.slotOf.get(chunk);
    if (slot === undefined) return;
    this.slotOf.delete(chunk);
    Atomics.store(words!, slot, 0);
  }

  /** The helper thread's script when the reading thread is to be used, else null. */
  private threadScriptToUse(): string | URL | null {
    if (this.thread === false || this.path === '-') return null;
    const script = this.threadScript ?? defaultThreadScript();
    if (this.thread === true) {
      if (script === null) throw new Error(`${this.name}: the reading thread needs the compiled read-thread.js`);
      return script;
    }
    if (script === null || !isMainThread || availableParallelism() < 2) return null;
    try {
      const st = statSync(this.path);
      const size = (this.end ?? st.size) - this.start;
      return st.isFile() && size >= THREAD_MIN_BYTES ? script : null;
    } catch {
      return null; // the ordinary path reports the problem
    }
  }

  /** chunks() through the reading thread (see the module comment and read-thread.ts). */
  private async *threadChunks(script: string | URL): AsyncGenerator<Uint8Array, void, undefined> {
    const control = new SharedArrayBuffer(8);
    const ctl = new Int32Array(control);
    const slots = new SharedArrayBuffer(4 * THREAD_SLOTS);
    this.slotWords = new Int32Array(slots);
    const data: ReadThreadData = {
      kind: 'sojourn-read',
      path: this.path,
      name: this.name,
      hwm: this.hwm,
      outChunk: this.outChunk,
      start: this.start,
      end: this.end ?? null,
      hash: this.hashing,
      control,
      queue: THREAD_QUEUE,
      slots,
    };
    const worker = new Worker(script, { workerData: data });
    const inbox: (ReadThreadMessage | { type: 'crash'; error: Error })[] = [];
    let wake: (() => void) | null = null;
    const post = (m: ReadThreadMessage | { type: 'crash'; error: Error }) => {
      inbox.push(m);
      const w = wake;
      wake = null;
      w?.();
    };
    worker.on('message', (m: ReadThreadMessage) => post(m));
    worker.on('error', (error: Error) => post({ type: 'crash', error }));
    worker.on('exit', (code) => post({ type: 'crash', error: new Error(`${this.name}: the reading thread stopped (status ${code})`) }));
    // The thread keeps the process alive only while a message is awaited: a source opened and
    // never read to the end must not hold the process open.
    worker.unref();
    const next = async (): Promise<ReadThreadMessage> => {
      if (inbox.length === 0) {
        worker.ref();
        try {
          while (inbox.length === 0) await new Promise<void>((resolve) => (wake = resolve));
        } finally {
          worker.unref();
        }
      }
      const m = inbox.shift()!;
      if (m.type === 'crash') throw m.error;
      return m;
    };
    let finished = false;
    let ended = false;
    try {
      for (;;) {
        const m = await next();
        if (m.type === 'chunk') {
          Atomics.sub(ctl, 0, 1);
          Atomics.notify(ctl, 0);
          this.rawBytes = m.raw;
          this.compressed = m.compressed;
          this.outBytes += m.length;
          const chunk = new Uint8Array(m.buffer, m.offset, m.length);
          if (m.slot >= 0) this.slotOf.set(chunk, m.slot);
          yield chunk;
        } else if (m.type === 'end') {
          ended = true;
          this.rawBytes = m.raw;
          this.compressed = m.compressed;
          this.digest = m.digest;
          finished = true;
          return;
        } else {
          ended = true;
          throw this.threadError(m);
        }
      }
    } catch (e) {
      this.failed = true;
      finished = true;
      throw e;
    } finally {
      if (!finished && this.hashing) {
        // Early return: the thread stops handing out chunks and hashes the rest.
        Atomics.store(ctl, 1, 1);
        Atomics.notify(ctl, 0);
        try {
          for (;;) {
            const m = await next();
            if (m.type === 'end') {
              ended = true;
              this.rawBytes = m.raw;
              this.digest = m.digest;
              break;
            }
            if (m.type === 'error') {
              ended = true;
              this.failed = true;
              break;
            }
          }
        } catch {
          this.failed = true;
        }
      }
      if (!ended) {
        Atomics.store(ctl, 1, 2);
        Atomics.notify(ctl, 0);
        await worker.terminate();
      }
      this.slotWords = null;
    }
  }

  private threadError(m: Extract<ReadThreadMessage, { type: 'error' }>): Error {
    if (m.code !== undefined) return readFailure(this.name, m.code, m.message);
    if (!m.input) return new Error(m.message);
    const e = new InputError(m.file ?? this.name, m.line ?? null, m.column ?? null, '');
    e.message = m.message;
    return e;
  }

  private async nextRaw(raw: AsyncIterator<Uint8Array>): Promise<Uint8Array | null> {
    let r: IteratorResult<Uint8Array>;
    try {
      r = await raw.next();
    } catch (e) {
      const err = e as NodeJS.ErrnoException;
      throw readFailure(this.name, err && typeof err === 'object' ? err.code : undefined, err instanceof Error ? err.message : String(e));
    }
    if (r.done) return null;
    const b = r.value;
    if (typeof b === 'string') throw new Error(`${this.name}: stream is in text mode; bytes expected`);
    if (this.hash !== null) this.hash.update(b);
    this.rawBytes += b.length;
    // Hand out plain Uint8Arrays (not Buffer) so that consumers see one array type.
    return new Uint8Array(b.buffer, b.byteOffset, b.length);
  }

  private async *inflate(first: Uint8Array, raw: AsyncIterator<Uint8Array>): AsyncGenerator<Uint8Array, void, undefined> {
    const gz = new GunzipStream(this.name, this.outChunk);
    try {
      let input: Uint8Array | null = first;
      while (input !== null) {
        gz.push(input);
        for (let out = gz.pull(); out !== null; out = gz.pull()) {
          this.outBytes += out.length;
          yield out;
        }
        input = await this.nextRaw(raw);
      }
      const last = gz.flush();
      if (last !== null) {
        this.outBytes += last.length;
        yield last;
      }
      gz.finish();
    } finally {
      gz.close();
    }
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
