// Types for the radix-4 FFT package 'fft.js' (its shipped declarations are all `any`).
declare module 'fft.js' {
  type Buffer = number[] | Float64Array;
  export default class FFT {
    constructor(size: number);
    readonly size: number;
    createComplexArray(): number[];
    toComplexArray(input: ArrayLike<number>, storage?: Buffer): number[];
    fromComplexArray(complex: ArrayLike<number>, storage?: Buffer): number[];
    /** Fills the upper half of a spectrum left by realTransform with its complex conjugates. */
    completeSpectrum(spectrum: Buffer): void;
    /** Complex forward transform, interleaved re/im, e^(−2πi nk/N). */
    transform(out: Buffer, data: ArrayLike<number>): void;
    /** Real forward transform; writes bins 0…N/2 (interleaved) of out, the rest is scratch. */
    realTransform(out: Buffer, data: ArrayLike<number>): void;
    /** Complex inverse transform, scaled by 1/N. */
    inverseTransform(out: Buffer, data: ArrayLike<number>): void;
  }
}
