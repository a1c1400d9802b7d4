/**
 * Types for fft.js 4 (radix-4 complex FFT; its bundled declarations are all `any`).
 * Complex arrays are interleaved [re0, im0, re1, im1, ...] of length 2·size; any indexable
 * number array works, we pass Float64Array. Forward transform uses e^{−2πi jk/size};
 * inverseTransform uses e^{+2πi jk/size} and divides by size.
 */
declare module 'fft.js' {
  type NumArray = Float64Array | number[];
  class FFT {
    /** size must be a power of two, at least 2. */
    constructor(size: number);
    readonly size: number;
    createComplexArray(): number[];
    toComplexArray(input: ArrayLike<number>, storage?: NumArray): NumArray;
    fromComplexArray(complex: ArrayLike<number>, storage?: NumArray): NumArray;
    /** Forward transform of a real input of length size; fills the first half of `out`. */
    realTransform(out: NumArray, data: ArrayLike<number>): void;
    /** Fill the upper half of a spectrum produced by realTransform (Hermitian symmetry). */
    completeSpectrum(spectrum: NumArray): void;
    /** Forward complex transform; `out` and `data` must be different arrays. */
    transform(out: NumArray, data: ArrayLike<number>): void;
    /** Inverse complex transform, normalised by 1/size; `out` and `data` must differ. */
    inverseTransform(out: NumArray, data: ArrayLike<number>): void;
  }
  export = FFT;
}
