// Settings of V8, the JavaScript engine: two made before any work starts, one before the worker threads start. A V8
// setting holds for every thread of the process.
import { availableParallelism } from 'node:os';
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

/**
 * Where the workers' JavaScript is optimised. V8 optimises a hot function on a background thread while the interpreter
 * goes on running it, and a long loop still running there is optimised a second time, on the spot (on-stack
 * replacement): about 0.4 s of a core a worker for the bench archive, the fused kernel alone 40–160 ms. With a core to
 * spare that costs nothing; when the workers take every core it only competes with them. Then each worker optimises in
 * its own thread, at once and once. Read as each thread starts (a thread's engine reads it when it is made), so set
 * before the pool starts its threads. Measured on 2 cores, alternating runs: two workers used 1–2 % less processor time
 * (within that hour's noise); one worker with this setting collected less (36–39 collections against 61–62 on short
 * recordings) but ran 2–4 % slower, its spare core idle, so fewer workers than cores keep V8's default.
 */
export function settleWorkerCompiling(threads: number, cores = availableParallelism()): boolean {
  const inline = threads >= cores;
  setFlagsFromString(inline ? '--no-concurrent-recompilation' : '--concurrent-recompilation');
  return inline;
}

/**
 * How large the workers' heaps start. V8 starts a heap small and collects it whole (a full, marking collection) each
 * time it outgrows its first bounds: a worker loading its code and reducing its first recordings passed them two to
 * four times, 40–45 ms of a worker's 70–115 ms of collecting on short recordings (--trace-gc, two workers). Starting at
 * 32 MB, about what a worker holds once under way, it collects whole once or twice; later bounds follow what is alive as
 * before, so a long run's memory is unchanged. Read as each thread starts, so set before the pool starts its threads.
 */
export function settleWorkerHeap(initialHeapMb = 32): void {
  setFlagsFromString(`--initial-heap-size=${initialHeapMb}`);
}
