// The HDF5 library (h5wasm: the HDF5 C library compiled to WebAssembly) as each thread holds it: one instance in use, a
// fresh one after an instance stops, and files taken through it one at a time.

export type H5 = typeof import('h5wasm');

/**
 * The library, one instance a thread, loaded on first use; HDF5's own errors are raised as exceptions rather than printed.
 * A damaged file can stop an instance for good (HDF5 calls abort(), or the WebAssembly traps): every later call into it
 * fails. The stop may come from damage an earlier file left in the instance's memory, so the call is tried once more on a
 * fresh instance before the file is blamed. An instance set aside stays loaded (some 8 MB) until its thread ends.
 */
let library: Promise<H5> | null = null;
let current: H5 | null = null;
let instances = 0, setAsideCount = 0;
export function h5wasm(): Promise<H5> {
  library ??= loadLibrary(instances++);
  return library;
}

async function loadLibrary(n: number): Promise<H5> {
  // A fresh instance is the same module loaded again under another URL: the module makes its instance as it loads
  // (import.meta.resolve is synchronous from Node 20.6, hence the engines field).
  const m = (await import(n === 0 ? 'h5wasm/node' : `${import.meta.resolve('h5wasm/node')}?instance=${n}`)) as H5;
  const module = await m.ready;
  module.activate_throwing_error_handler();
  current = m;
  return m;
}

/** Whether an error means the instance itself stopped (an abort or a trap), not that HDF5 refused the file. */
export const libraryStopped = (e: unknown) => e instanceof WebAssembly.RuntimeError;
/** A stop passes through the reader's own messages to where the instance is set aside. */
export const rethrowStop = (e: unknown) => { if (libraryStopped(e)) throw e; };

/** The next file gets a fresh instance. */
export function setAside(h5: H5): void {
  if (current === h5) { library = null; current = null; setAsideCount++; }
}

/** Instances this thread has loaded (one more for each set aside). */
export const hdf5Instances = () => instances;
/** Instances this thread has set aside: each still holds its memory, which only the thread's end gives back. */
export const hdf5SetAside = () => setAsideCount;
/**
 * Bytes of WebAssembly memory the instance in use holds. It grows with what HDF5 allocates and never shrinks: one damaged
 * file whose header asks for a huge buffer grew it from 18 MB to 1.3 GB (a scan of damaged copies of a fixture).
 */
export const hdf5MemoryBytes = () => current?.Module.HEAPU8.length ?? 0;

// Files go through a thread's instance one at a time (open to close, or to the end of their samples): a file that stops
// it then takes no other file with it. h5wasm's calls are synchronous, so nothing that could overlap is lost.
let queue: Promise<void> = Promise.resolve();
export async function takeTurn(): Promise<() => void> {
  const before = queue;
  let release!: () => void;
  queue = new Promise((r) => { release = r; });
  await before;
  let done = false;
  return () => { if (!done) { done = true; release(); } };
}
