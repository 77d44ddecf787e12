// Types for fft.js (radix-4 FFT, plain JavaScript; ships no declarations of its own).
declare module 'fft.js' {
  type Complex = number[] | Float64Array;
  export default class FFT {
    constructor(size: number);
    readonly size: number;
    createComplexArray(): number[];
    toComplexArray(input: ArrayLike<number>, storage?: Complex): number[];
    fromComplexArray(complex: Complex, storage?: number[]): number[];
    completeSpectrum(spectrum: Complex): void;
    transform(out: Complex, data: Complex): void;
    realTransform(out: Complex, data: ArrayLike<number>): void;
    inverseTransform(out: Complex, data: Complex): void;
  }
}
