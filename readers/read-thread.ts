/**
 * The reading thread of readers/bytes.ts (ByteSource, see its module comment): reads a file or
 * a byte range of it, hashes the raw bytes (SHA-256), inflates gzip with the same GunzipStream
 * the caller's thread would use, and hands each chunk to the parsing thread by transfer.
 *
 * Shared control words (Int32Array over workerData.control):
 *   [0] chunks handed over and not yet taken: the thread waits (Atomics.wait) while it is at
 *       workerData.queue, so at most that many chunks are in flight;
 *   [1] command from the parsing thread: 0 run; 1 stop handing out chunks, read and hash the
 *       rest, then report the digest; 2 abort at once.
 * Messages (ReadThreadMessage): 'chunk' per chunk, then 'end' with the digest, or 'error'.
 * Chunks are read (plain) or inflated (gzip) into a ring of shared buffers: workerData.slots
 * has one word per slot, set to 1 here when a chunk goes out in it and back to 0 by the consumer
 * (ByteSource.release); with no slot free, a new buffer is transferred instead. gzip input is
 * read into one private buffer again and again (the decoder is done with it before the next read).
 */
import { closeSync, openSync, readSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { isMainThread, parentPort, workerData } from 'node:worker_threads';
import { InputError } from '../src/errors.js';
import type { ReadThreadData, ReadThreadMessage } from './bytes.js';
import { GunzipStream } from './gunzip.js';

/** Read, hash, inflate and hand over, as described in the module comment. */
export function runReadThread(d: ReadThreadData, post: (m: ReadThreadMessage, transfer?: ArrayBuffer[]) => void): void {
  const ctl = new Int32Array(d.control);
  const hash = d.hash ? createHash('sha256') : null;
  let fd = -1;
  let pos = d.start;
  let raw = 0;
  let compressed = false;
  let gz: GunzipStream | null = null;
  const words = new Int32Array(d.slots);
  const ring: (SharedArrayBuffer | undefined)[] = new Array(words.length);
  /** Ring slot of each shared buffer. */
  const slotOf = new Map<ArrayBufferLike, number>();
  /** A buffer of exactly `size` bytes: a free ring slot (now taken) when there is one. */
  const take = (size: number): Uint8Array => {
    for (let k = 0; k < words.length; k++) {
      const b = ring[k];
      if ((b === undefined || b.byteLength === size) && Atomics.load(words, k) === 0) {
        const sab = b ?? (ring[k] = new SharedArrayBuffer(size));
        slotOf.set(sab, k);
        Atomics.store(words, k, 1);
        return new Uint8Array(sab);
      }
    }
    return new Uint8Array(size);
  };
  /**
   * One buffer read into again and again when no chunk leaves the thread: gzip input (the
   * decoder has used it up before the next read) and the rest of a file after a stop (hashed only).
   */
  let input1: Uint8Array | null = null;
  /** Told to stop handing out chunks. */
  let stopped = false;

  const read = (): Uint8Array | null => {
    const want = d.end === null ? d.hwm : Math.min(d.hwm, d.end - pos);
    if (want <= 0) return null;
    const b = gz !== null || stopped ? (input1 !== null && input1.length >= want ? input1 : (input1 = new Uint8Array(want))) : take(want);
    const n = readSync(fd, b, 0, want, pos);
    if (n === 0) return null;
    pos += n;
    raw += n;
    const c = n === want ? b : b.subarray(0, n);
    hash?.update(c);
    return c;
  };

  /** Hand a chunk over (waiting for room in the queue); false once told to stop. */
  const handOver = (c: Uint8Array): boolean => {
    for (;;) {
      if (Atomics.load(ctl, 1) !== 0) return false;
      const q = Atomics.load(ctl, 0);
      if (q < d.queue) break;
      Atomics.wait(ctl, 0, q, 1000);
    }
    Atomics.add(ctl, 0, 1);
    const slot = slotOf.get(c.buffer) ?? -1;
    const buffer = c.buffer;
    post({ type: 'chunk', buffer, slot, offset: c.byteOffset, length: c.length, raw, compressed }, slot < 0 ? [buffer as ArrayBuffer] : []);
    return true;
  };

  try {
    fd = openSync(d.path, 'r');
    let input = read();
    if (d.start === 0 && d.end === null && input !== null && input.length < 2) {
      // Tiny reads: gather the two bytes that tell gzip.
      const more = read();
      if (more !== null) {
        const both = new Uint8Array(input.length + more.length);
        both.set(input);
        both.set(more, input.length);
        input = both;
      }
    }
    compressed = d.start === 0 && d.end === null && input !== null && input.length >= 2 && input[0] === 0x1f && input[1] === 0x8b;
    if (compressed) gz = new GunzipStream(d.name, d.outChunk, take);
    while (input !== null) {
      if (!stopped) {
        if (gz !== null) {
          gz.push(input);
          for (let out = gz.pull(); out !== null; out = gz.pull()) {
            if (!handOver(out)) {
              stopped = true;
              break;
            }
          }
        } else if (!handOver(input)) stopped = true;
      }
      if (stopped && (hash === null || Atomics.load(ctl, 1) === 2)) return;
      input = read();
    }
    if (!stopped && gz !== null) {
      const last = gz.flush();
      if (last !== null && !handOver(last)) {
        // Stopped at the very end: like any stop, the digest without the end-of-stream check.
        if (hash === null || Atomics.load(ctl, 1) === 2) return;
      } else gz.finish();
    }
    post({ type: 'end', digest: hash === null ? null : hash.digest('hex'), raw, compressed });
  } catch (e) {
    if (e instanceof InputError) {
      post({ type: 'error', input: true, file: e.file, line: e.line, column: e.column, message: e.message });
    } else {
      const err = e as NodeJS.ErrnoException;
      const code = err && typeof err === 'object' && typeof err.code === 'string' ? err.code : undefined;
      post({ type: 'error', input: code !== undefined, ...(code !== undefined ? { code } : {}), message: err instanceof Error ? err.message : String(e) });
    }
  } finally {
    gz?.close();
    if (fd >= 0) closeSync(fd);
  }
}

if (!isMainThread && parentPort !== null && (workerData as ReadThreadData | undefined)?.kind === 'sojourn-read') {
  const port = parentPort;
  runReadThread(workerData as ReadThreadData, (m, transfer) => port.postMessage(m, transfer));
}
