// The WebAssembly FFT builds the micro-benchmark (bench/fft.ts) compares; they ship no declarations.
declare module '@echogarden/pffft-wasm/simd' {
  const factory: () => Promise<any>;
  export default factory;
}
declare module '@echogarden/kissfft-wasm' {
  const factory: () => Promise<any>;
  export default factory;
}
