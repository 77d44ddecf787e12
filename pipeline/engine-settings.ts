// Two settings of V8, the JavaScript engine, made before any work starts; a V8 setting holds for every thread of the process.
import { setFlagsFromString } from 'node:v8';

/**
 * - `wasmTieringBudget`: V8 recompiles a WebAssembly function with its optimising compiler once it has run about 1.8 MB
 *   of code (--wasm-tiering-budget). The Parquet writer's functions reach that while writing a few small tables: a run
 *   spent 0.1–0.2 s of processor time optimising writer code it was about to stop using, on the core a second worker
 *   needs. Ten times as large, the FFT and true-peak kernels, which run for seconds, are still optimised at once.
 * - `heapGrowingPercent`: after a full collection V8 lets the heap grow to up to four times what is still alive before
 *   the next one. Reading the stored results of 100,000 recordings for the trends' baselines, the main thread's heap grew
 *   to over 200 MB of dead entries while 50 MB stayed alive (the run's peak: 410–490 MB). Twice what is alive keeps it
 *   near 350 MB, for a little more collecting (--heap-growing-percent; small heaps such as the workers' keep V8's floor).
 * Set before any WebAssembly is compiled.
 */
export function settleEngine({ wasmTieringBudget = 20_000_000, heapGrowingPercent = 100 } = {}): void {
  setFlagsFromString(`--wasm-tiering-budget=${wasmTieringBudget}`);
  setFlagsFromString(`--heap-growing-percent=${heapGrowingPercent}`);
}
