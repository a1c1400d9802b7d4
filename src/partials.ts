/**
 * JSON codec for pass partials, so that a frame range analysed in one job can be merged with
 * others later (`--partial-out`, `sojourn merge`). Typed arrays are stored as base64 of their
 * little-endian bytes, so the round trip is bit-exact; Maps become tagged entry lists.
 */
import type { Topology } from './types.js';

type Tagged =
  | { $typed: 'Float64Array' | 'Float32Array' | 'Int32Array' | 'Uint32Array' | 'Uint8Array' | 'Int8Array' | 'Uint16Array' | 'Int16Array' | 'Float64ArrayView'; b64: string }
  | { $map: [unknown, unknown][] }
  | { $num: 'NaN' | 'Infinity' | '-Infinity' };

const CTORS = {
  Float64Array, Float32Array, Int32Array, Uint32Array, Uint8Array, Int8Array, Uint16Array, Int16Array,
} as const;

/** Encode a value (plain data, typed arrays, Maps, non-finite numbers) as JSON-safe data. */
export function encodePartial(value: unknown): unknown {
  if (typeof value === 'number') {
    if (Number.isNaN(value)) return { $num: 'NaN' };
    if (value === Infinity) return { $num: 'Infinity' };
    if (value === -Infinity) return { $num: '-Infinity' };
    return value;
  }
  if (value === null || typeof value !== 'object') return value;
  if (ArrayBuffer.isView(value) && !(value instanceof DataView)) {
    const name = value.constructor.name as keyof typeof CTORS;
    if (!(name in CTORS)) throw new Error(`cannot encode ${name}`);
    const bytes = Buffer.from(value.buffer, value.byteOffset, value.byteLength);
    return { $typed: name, b64: bytes.toString('base64') };
  }
  if (value instanceof Map) return { $map: [...value.entries()].map(([k, v]) => [encodePartial(k), encodePartial(v)]) };
  if (Array.isArray(value)) return value.map(encodePartial);
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(value)) out[k] = encodePartial(v);
  return out;
}

/** Inverse of encodePartial. */
export function decodePartial(value: unknown): unknown {
  if (value === null || typeof value !== 'object') return value;
  if (Array.isArray(value)) return value.map(decodePartial);
  const v = value as Record<string, unknown>;
  if (typeof v.$typed === 'string' && typeof v.b64 === 'string') {
    const Ctor = CTORS[v.$typed as keyof typeof CTORS];
    if (!Ctor) throw new Error(`unknown typed array ${v.$typed}`);
    const buf = Buffer.from(v.b64, 'base64');
    const copy = new Uint8Array(buf.length);
    copy.set(buf);
    return new Ctor(copy.buffer, 0, copy.length / Ctor.BYTES_PER_ELEMENT);
  }
  if (Array.isArray(v.$map)) return new Map((v.$map as [unknown, unknown][]).map(([a, b]) => [decodePartial(a), decodePartial(b)]));
  if (typeof v.$num === 'string') return Number(v.$num);
  const out: Record<string, unknown> = {};
  for (const [k, x] of Object.entries(v)) out[k] = decodePartial(x);
  return out;
}

/** What a partial-result file holds. */
export interface PartialFile {
  tool: 'sojourn';
  kind: 'partial';
  version: string;
  /** The command and its arguments after the command name (input path first). */
  argv: string[];
  command: string;
  /** The command's options as given (without --frames, --threads, --partial-out). */
  options?: Record<string, unknown>;
  passes: string[];
  /** How each pass was built (src/engine/recipes.ts), so that merge builds the same passes. */
  recipes?: Array<{ kind: string; options: unknown } | null>;
  input: { path: string; sha256: string; bytes: number; format: string };
  firstIndex: number;
  lastIndex: number;
  framesUsed: number;
  frameInterval: number | null;
  firstCell: number[] | null;
  topology: unknown;
  /** The record of the job's used frames (src/sequence.ts FrameLog, encoded), checked when jobs merge. */
  frames?: unknown;
  partials: unknown[];
  warnings: string[];
}

/** Topology to plain data (typed arrays kept through the codec). */
export function encodeTopology(t: Topology): unknown {
  return encodePartial(t);
}

/** Plain data back to a Topology. */
export function decodeTopology(x: unknown): Topology {
  return decodePartial(x) as Topology;
}
