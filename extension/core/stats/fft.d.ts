/**
 * The part of fft.js (Fedor Indutny's radix-4 FFT, npm `fft.js`) the core uses; the package ships no type declarations.
 * Complex arrays interleave real and imaginary parts; `inverseTransform` includes the 1/size factor.
 */
declare module 'fft.js' {
  class FFT {
    constructor(size: number);
    readonly size: number;
    createComplexArray(): number[];
    realTransform(output: ArrayLike<number> & { [i: number]: number }, input: ArrayLike<number>): void;
    completeSpectrum(spectrum: ArrayLike<number> & { [i: number]: number }): void;
    inverseTransform(output: ArrayLike<number> & { [i: number]: number }, input: ArrayLike<number>): void;
  }
  export default FFT;
}
