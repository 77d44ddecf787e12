// When V8 recompiles a WebAssembly function with its optimising compiler. By default it does so once a function has run
// about 1.8 MB of code (V8's --wasm-tiering-budget), which the Parquet writer's functions reach while writing a few small
// tables: a run spent 0.1–0.2 s of processor time optimising writer code it was about to stop using, on the core a second
// worker needs. With a budget ten times as large the FFT and true-peak kernels, which run for seconds, are still optimised
// within their first milliseconds. Set before any WebAssembly is compiled; the setting holds for every thread of the process.
import { setFlagsFromString } from 'node:v8';

export function settleWasmTiering(budget = 20_000_000): void {
  setFlagsFromString(`--wasm-tiering-budget=${budget}`);
}
