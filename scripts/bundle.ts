// Bundles the compiled command (dist/pipeline/cli.js) and worker (dist/pipeline/reduce/worker.js) in place, with the
// modules they load, so that a run's threads load a few files instead of some hundreds (each module costs a file lookup,
// a read and a compile). What each command or step loads lazily stays in its own chunk, loaded as before only when needed.
// `npm run build` (and `npm test`, `npm run bench`) run it after tsc; without it the tsc output runs as it is, only slower.
// Usage: node dist/scripts/bundle.js
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { build } from 'esbuild';
import { packageRoot } from '../pipeline/declare/package-files.js';

/** The bundles' entries, as tsc compiled them. */
export const ENTRIES = ['pipeline/cli.js', 'pipeline/reduce/worker.js'];

/**
 * Packages left to load from node_modules: those that find files beside their own modules (tinypool its thread entry,
 * parquet-wasm and h5wasm their WebAssembly, yargs its messages) and the large ones loaded only for some runs.
 */
export const EXTERNAL = ['tinypool', 'parquet-wasm', 'h5wasm', 'vega', 'vega-lite', 'exceljs'];

/** Where the shared and lazily loaded chunks go, under dist/. */
export const CHUNKS = 'chunks';

export async function bundle(root = packageRoot): Promise<void> {
  const dist = join(root, 'dist');
  rmSync(join(dist, CHUNKS), { recursive: true, force: true });
  await build({
    entryPoints: ENTRIES.map((e) => join(dist, e)),
    outdir: dist,
    outbase: dist,
    allowOverwrite: true,
    bundle: true,
    splitting: true,
    format: 'esm',
    platform: 'node',
    target: 'node20',
    chunkNames: `${CHUNKS}/[name]-[hash]`,
    external: EXTERNAL,
    sourcemap: true,
    logLevel: 'warning',
    // Bundled CommonJS packages (yaml, picomatch, cli-progress) call require() for Node's own modules.
    banner: { js: "import { createRequire as createRequireForBundle } from 'node:module'; const require = createRequireForBundle(import.meta.url);" },
  });
}

if (process.argv[1] === fileURLToPath(import.meta.url)) await bundle();
