// Bundles the compiled command (dist/pipeline/cli.js) and worker (dist/pipeline/reduce/worker.js) in place, with the
// modules they load, so that a run's threads load a few files instead of some hundreds (each module costs a file lookup,
// a read and a compile). What each command or step loads lazily stays in its own chunk, loaded as before only when needed.
// `npm run build` (and `npm test`, `npm run bench`) run it after tsc; without it the tsc output runs as it is, only slower.
// Usage: node dist/scripts/bundle.js
import { readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
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
 * A plugin that changes one line of a dependency's module as it is bundled. With `required`, the build stops when the
 * line is no longer there (a new version of the dependency), so that the change is reviewed rather than silently lost;
 * without, modules the filter matches that lack the line (older copies of the package) are left as they are.
 */
function rewriteLine(name: string, filter: RegExp, line: string, replacement: string, required = true): Plugin {
  return {
    name,
    setup(b) {
      b.onLoad({ filter }, (args) => {
        const source = readFileSync(args.path, 'utf8');
        if (!source.includes(line)) {
          if (!required) return undefined;
          throw new Error(`${args.path}: no longer holds the line ${name} in scripts/bundle.ts rewrites; review it`);
        }
        return { contents: source.replace(line, replacement), loader: 'js' };
      });
    },
  };
}

/**
 * yargs guesses a version by listing folders upward from its own place until one holds a package.json. Bundled, it no
 * longer finds its place and starts at the working directory: every run listed that folder and each one above it (an
 * archive folder of 100,000 recordings among them). quern states its version, so the search starts at quern's own folder:
 * __dirname is the bundle's own file (dist/pipeline/cli.js), and two levels up is dist/, beside quern's package.json.
 */
export const yargsStartsAtQuern = rewriteLine('yargs-starts-at-quern', /[\\/]yargs[\\/]lib[\\/]platform-shims[\\/]esm\.mjs$/,
  "const mainFilename = __dirname.substring(0, __dirname.lastIndexOf('node_modules'));",
  "const mainFilename = resolve(__dirname, '..', '..');");

/**
 * string-width (under yargs' help layout) makes an Intl.Segmenter as it loads, some milliseconds each for ICU's break
 * rules, three copies in all, on every run; only a help text or a usage error measures widths. Each is made on first use.
 */
export const segmentersOnFirstUse = rewriteLine('segmenters-on-first-use', /[\\/]string-width[\\/]index\.js$/,
  'const segmenter = new Intl.Segmenter();',
  'let madeSegmenter; const segmenter = { segment: (text) => (madeSegmenter ??= new Intl.Segmenter()).segment(text) };',
  false); // cli-progress's older string-width has no segmenter; test/bundle.test.ts holds that none is made at load

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
