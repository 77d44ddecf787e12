// The Parquet writer and reader (Apache Arrow's Rust implementation compiled to WebAssembly). Its Node build is
// CommonJS: required, it loads as it is; imported from ES modules, Node first scans its 100 KB of source for the names
// it exports (cjs-module-lexer), and V8 then spends some 70 ms optimising that scanner on a core the workers need.
import { createRequire } from 'node:module';

export type ParquetWasm = typeof import('parquet-wasm/node');

let loaded: ParquetWasm | null = null;

/** The module, loaded on first use (compiling its WebAssembly as it loads). */
export const parquetWasm = (): ParquetWasm => (loaded ??= createRequire(import.meta.url)('parquet-wasm/node') as ParquetWasm);
