// Bundles the compiled command (dist/pipeline/cli.js) and worker (dist/pipeline/reduce/worker.js) in place, with the
// modules they load, so that a run's threads load a few files instead of some hundreds (each module costs a file lookup,
// a read and a compile). What each command or step loads lazily stays in its own chunk, loaded as before only when needed.
// `npm run build` (and `npm test`, `npm run bench`) run it after tsc; without it the tsc output runs as it is, only slower.
// Usage: node dist/scripts/bundle.js
import { rmSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { readFileSync } from 'node:fs';
import { build, type Plugin } from 'esbuild';
import { packageRoot } from '../pipeline/declare/package-files.js';

/** The bundles' entries, as tsc compiled them; the bench's measured run loads its code as the command does. */
export const ENTRIES = ['pipeline/cli.js', 'pipeline/reduce/worker.js', 'bench/measure.js'];

/**
 * Packages left to load from node_modules: those that find files beside their own modules (tinypool its thread entry,
 * parquet-wasm and h5wasm their WebAssembly, yargs its messages) and the large ones loaded only for some runs.
 */
export const EXTERNAL = ['tinypool', 'parquet-wasm', 'h5wasm', 'vega', 'vega-lite', 'exceljs'];

/** Where the shared and lazily loaded chunks go, under dist/. */
export const CHUNKS = 'chunks';

/**
 * yargs guesses a version by listing folders upward from its own place until one holds a package.json. Bundled, it no
 * longer finds its place and starts at the working directory: every run listed that folder and each one above it (an
 * archive folder of 100,000 recordings among them). quern states its version, so the search starts at quern's own folder.
 */
export const yargsStartsAtQuern: Plugin = {
  name: 'yargs-starts-at-quern',
  setup(b) {
    b.onLoad({ filter: /[\\/]yargs[\\/]lib[\\/]platform-shims[\\/]esm\.mjs$/ }, (args) => {
      const source = readFileSync(args.path, 'utf8');
      const guess = "const mainFilename = __dirname.substring(0, __dirname.lastIndexOf('node_modules'));";
      if (!source.includes(guess)) throw new Error(`${args.path}: yargs no longer guesses its place as expected; review yargsStartsAtQuern in scripts/bundle.ts`);
      // __dirname is the bundle's own file (dist/pipeline/cli.js): two levels up is dist/, beside quern's package.json
      return { contents: source.replace(guess, "const mainFilename = resolve(__dirname, '..', '..');"), loader: 'js' };
    });
  },
};

/**
 * string-width (under yargs' help layout) makes an Intl.Segmenter as it loads, some milliseconds each for ICU's break
 * rules, three copies in all, on every run; only a help text or a usage error measures widths. Each is made on first use.
 */
export const segmentersOnFirstUse: Plugin = {
  name: 'segmenters-on-first-use',
  setup(b) {
    b.onLoad({ filter: /[\\/]string-width[\\/]index\.js$/ }, (args) => {
      const source = readFileSync(args.path, 'utf8');
      const eager = 'const segmenter = new Intl.Segmenter();';
      if (!source.includes(eager)) return undefined;
      return { contents: source.replace(eager, 'let madeSegmenter; const segmenter = { segment: (text) => (madeSegmenter ??= new Intl.Segmenter()).segment(text) };'), loader: 'js' };
    });
  },
};

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
    plugins: [yargsStartsAtQuern, segmentersOnFirstUse],
    // Node 20 has the regular expressions' v flag; left as literals, they compile on first use, not as the bundle loads
    // (string-width's emoji classes took about 6 ms at every start as `new RegExp(…, 'v')`).
    supported: { 'regexp-set-notation': true, 'regexp-unicode-property-escapes': true },
    // Bundled CommonJS packages (yaml, picomatch, cli-progress) call require() for Node's own modules.
    banner: { js: "import { createRequire as createRequireForBundle } from 'node:module'; const require = createRequireForBundle(import.meta.url);" },
  });
}

if (process.argv[1] === fileURLToPath(import.meta.url)) await bundle();
