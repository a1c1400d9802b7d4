/**
 * Seeded pseudo-random numbers for tests, demos and benchmarks (never for production statistics).
 *
 * Generator: xoshiro128** 1.1 (D. Blackman and S. Vigna, "Scrambled linear pseudorandom number
 * generators", ACM Trans. Math. Softw. 47, 36 (2021); reference code at prng.di.unimi.it):
 * 128-bit state of four 32-bit words, period 2^128 − 1, 32-bit outputs. All arithmetic is done
 * with 32-bit integer operations (Math.imul, >>>), so a run is bit-for-bit reproducible on any
 * JavaScript engine.
 *
 * Seeding: the integer seed is expanded with SplitMix64 (G. L. Steele, D. Lea and C. H. Flood,
 * "Fast splittable pseudorandom number generators", OOPSLA 2014), the seeding procedure the
 * xoshiro authors recommend; its two first 64-bit outputs fill the four state words
 * (low word first). BigInt is used only there, at construction.
 *
 * Doubles: 53 random bits from two outputs, (a·2^21 + b) / 2^53 with a the top 32 bits and b the
 * top 21 bits of the next output → uniform on [0, 1) with spacing 2^−53.
 *
 * Normals: Box–Muller transform (G. E. P. Box and M. E. Muller, Ann. Math. Statist. 29, 610
 * (1958)): z₁ = √(−2 ln u₁) cos 2πu₂, z₂ = √(−2 ln u₁) sin 2πu₂; both values are used.
 */

const MASK64 = (1n << 64n) - 1n;

/**
 * SplitMix64 step: returns [output, nextState] for a 64-bit state, as in Steele, Lea & Flood
 * (OOPSLA 2014): state += 0x9E3779B97F4A7C15; z = state; z = (z ⊕ z≫30)·0xBF58476D1CE4E5B9;
 * z = (z ⊕ z≫27)·0x94D049BB133111EB; output z ⊕ z≫31 (all modulo 2^64).
 */
export function splitmix64(state: bigint): [bigint, bigint] {
  const next = (state + 0x9e3779b97f4a7c15n) & MASK64;
  let z = next;
  z = ((z ^ (z >> 30n)) * 0xbf58476d1ce4e5b9n) & MASK64;
  z = ((z ^ (z >> 27n)) * 0x94d049bb133111ebn) & MASK64;
  return [z ^ (z >> 31n), next];
}

/** 32-bit left rotation (helper of xoshiro128**). */
function rotl(x: number, k: number): number {
  return (x << k) | (x >>> (32 - k));
}

/**
 * Seeded generator: xoshiro128** with SplitMix64 seeding, uniform doubles and Box–Muller normals
 * (sources in the module comment). Not thread-shared: make one per consumer.
 */
export class Random {
  private s0: number;
  private s1: number;
  private s2: number;
  private s3: number;
  private spare = 0;
  private hasSpare = false;

  /** Seed from any integer (negative or > 2^53 accepted through BigInt); same seed → same stream. */
  constructor(seed: number | bigint) {
    let st = BigInt.asUintN(64, typeof seed === 'bigint' ? seed : BigInt(Math.trunc(seed)));
    const [a, st1] = splitmix64(st);
    st = st1;
    const [b] = splitmix64(st);
    this.s0 = Number(a & 0xffffffffn) | 0;
    this.s1 = Number(a >> 32n) | 0;
    this.s2 = Number(b & 0xffffffffn) | 0;
    this.s3 = Number(b >> 32n) | 0;
    if ((this.s0 | this.s1 | this.s2 | this.s3) === 0) this.s0 = 1; // all-zero state is a fixed point
  }

  /** Generator with the four 32-bit state words given directly (for reference test vectors). */
  static fromState(s0: number, s1: number, s2: number, s3: number): Random {
    const r = new Random(0);
    r.s0 = s0 | 0;
    r.s1 = s1 | 0;
    r.s2 = s2 | 0;
    r.s3 = s3 | 0;
    return r;
  }

  /**
   * Next 32-bit output of xoshiro128** as an unsigned integer: result = rotl(s1·5, 7)·9, then the
   * linear engine update (Blackman & Vigna 2021, xoshiro128starstar.c).
   */
  nextUint32(): number {
    const s1 = this.s1;
    const result = Math.imul(rotl(Math.imul(s1, 5), 7), 9) >>> 0;
    const t = s1 << 9;
    this.s2 ^= this.s0;
    this.s3 ^= s1;
    this.s1 ^= this.s2;
    this.s0 ^= this.s3;
    this.s2 ^= t;
    this.s3 = rotl(this.s3, 11);
    return result;
  }

  /** Uniform double on [0, 1) with 53 random bits: (a·2^21 + b)/2^53, a = 32 bits, b = top 21 bits. */
  uniform(): number {
    const a = this.nextUint32();
    const b = this.nextUint32() >>> 11;
    return (a * 2097152 + b) / 9007199254740992;
  }

  /** Standard normal N(0, 1) by the Box–Muller transform (Box & Muller 1958); pairs are cached. */
  normal(): number {
    if (this.hasSpare) {
      this.hasSpare = false;
      return this.spare;
    }
    const u1 = 1 - this.uniform(); // (0, 1]: log is finite
    const u2 = this.uniform();
    const r = Math.sqrt(-2 * Math.log(u1));
    const phase = 2 * Math.PI * u2;
    this.spare = r * Math.sin(phase);
    this.hasSpare = true;
    return r * Math.cos(phase);
  }

  /** Fill `out` with independent N(mean, sd²) values (Box–Muller); returns `out`. */
  fillNormal(out: Float64Array, mean = 0, sd = 1): Float64Array {
    for (let i = 0; i < out.length; i++) out[i] = mean + sd * this.normal();
    return out;
  }
}

/**
 * Gaussian AR(1) series x_t = φ·x_{t−1} + ε_t with ε_t ~ N(0, 1), started in the stationary
 * distribution x_0 ~ N(0, 1/(1−φ²)) so there is no transient. Requires |φ| < 1. Its statistical
 * inefficiency is g = (1+φ)/(1−φ) (M. B. Priestley, Spectral Analysis and Time Series,
 * Academic Press 1981, AR(1) process: ρ(k) = φ^|k|, g = 1 + 2Σ_{k≥1}φ^k).
 */
export function ar1Series(n: number, phi: number, seed: number | bigint): Float64Array {
  if (!(Math.abs(phi) < 1)) throw new RangeError(`ar1Series: |phi| must be < 1, got ${phi}`);
  const rng = new Random(seed);
  const x = new Float64Array(n);
  if (n === 0) return x;
  let v = rng.normal() / Math.sqrt(1 - phi * phi);
  x[0] = v;
  for (let i = 1; i < n; i++) {
    v = phi * v + rng.normal();
    x[i] = v;
  }
  return x;
}

/**
 * Ornstein–Uhlenbeck process sampled every dt with the exact update
 * x(t+dt) = x(t)·e^{−dt/τ} + σ·√(1−e^{−2dt/τ})·ξ, ξ ~ N(0, 1) (D. T. Gillespie, Phys. Rev. E 54,
 * 2084 (1996), written with stationary variance σ²). Starts from x0 if given, else from the
 * stationary distribution N(0, σ²). Autocorrelation ρ(t) = e^{−|t|/τ}.
 */
export function ornsteinUhlenbeck(
  n: number,
  dt: number,
  tau: number,
  sigma: number,
  seed: number | bigint,
  opts: { x0?: number } = {},
): Float64Array {
  if (!(dt > 0) || !(tau > 0) || !(sigma >= 0)) {
    throw new RangeError('ornsteinUhlenbeck: need dt > 0, tau > 0, sigma >= 0');
  }
  const rng = new Random(seed);
  const a = Math.exp(-dt / tau);
  const b = sigma * Math.sqrt(-Math.expm1((-2 * dt) / tau));
  const x = new Float64Array(n);
  if (n === 0) return x;
  let v = opts.x0 ?? sigma * rng.normal();
  x[0] = v;
  for (let i = 1; i < n; i++) {
    v = a * v + b * rng.normal();
    x[i] = v;
  }
  return x;
}
