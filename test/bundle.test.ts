// The command's bundle (scripts/bundle.ts, built by npm test before the tests run): what a run pays for as it starts.
import { spawnSync } from 'node:child_process';
import { readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { quern, repo, sampleArchiveCopy, tempDir } from './helpers.js';

const bundle = () => readFileSync(join(repo, 'dist', 'pipeline', 'cli.js'), 'utf8');

/** The source files (from the source maps) of a bundled file and of every chunk it imports statically, as a thread loads them. */
function staticSources(file: string, seen = new Set<string>()): Set<string> {
  if (seen.has(file)) return new Set();
  seen.add(file);
  const sources = new Set<string>((JSON.parse(readFileSync(`${file}.map`, 'utf8')) as { sources: string[] }).sources.map((s) => resolve(dirname(file), s)));
  // static imports only: `import ... from "./x.js"` and `import "./x.js"`, never `import("./x.js")`
  for (const [, path] of readFileSync(file, 'utf8').matchAll(/^(?:import|export)\b[^;(]*?["'](\.{1,2}\/[^"']+\.js)["'];?$/gm)) {
    for (const s of staticSources(resolve(dirname(file), path), seen)) sources.add(s);
  }
  return sources;
}

describe('the command bundle', () => {
  it("starts yargs' version search at quern's own folder, not at the working directory", () => {
    // Bundled, yargs otherwise lists every folder from the working directory up to the root at each start.
    const cli = bundle();
    expect(cli).not.toContain('lastIndexOf("node_modules")');
    expect(cli).toMatch(/mainFilename = resolve\d*\(__dirname, "\.\.", "\.\."\);/);
  });

  it("makes string-width's segmenters on first use, and the help text still lays out", () => {
    expect(bundle()).not.toMatch(/^var \w+ = new Intl\.Segmenter\(\);$/m);
    const help = quern('--help');
    expect(help.code).toBe(0);
    // yargs measures each line to wrap the descriptions at 80 columns beside the command names
    const lines = help.stdout.split('\n');
    expect(Math.max(...lines.map((l) => l.length))).toBeLessThanOrEqual(80);
    expect(lines.some((l) => /^ {26}\S/.test(l))).toBe(true);
  });

  it('keeps regular expressions with the v flag as literals, compiled on first use', () => {
    expect(bundle()).not.toMatch(/new RegExp\("[^"]*", "v"\)/);
    expect(bundle()).toMatch(/= \/\^\\p\{RGI_Emoji\}\$\/v;/);
  });

  it('an unchanged re-run loads no worker-pool code', () => {
    const archive = sampleArchiveCopy(), out = join(tempDir(), 'out'), loaded = join(tempDir(), 'loaded.txt');
    const hook = join(tempDir(), 'loaded.cjs');
    writeFileSync(hook, `process.on('exit', () => require('fs').writeFileSync(${JSON.stringify(loaded)}, process.moduleLoadList.join('\\n')));\n`);
    const run = () => spawnSync(process.execPath, ['-r', hook, join(repo, 'dist', 'pipeline', 'cli.js'), 'reduce', archive, '--out', out, '--jobs', '1'], { encoding: 'utf8' });
    // the sample archive holds recordings that fail on purpose: exit code 1
    expect(run().status).toBe(1);
    // the first run reduces, so it loads the pool (tinypool brings Node's child-process module)
    expect(readFileSync(loaded, 'utf8')).toContain('NativeModule child_process');
    const again = run();
    expect(again.status).toBe(1);
    expect(again.stderr + again.stdout).toMatch(/reducing 0 recordings/);
    expect(readFileSync(loaded, 'utf8')).not.toContain('NativeModule child_process');
  });

  it('the reduce command loads no reader as it starts: only a run that must read a header (a new file\'s start time) does', () => {
    const chunks = join(repo, 'dist', 'chunks');
    const mapped = (f: string) => (JSON.parse(readFileSync(join(chunks, `${f}.map`), 'utf8')) as { sources: string[] }).sources.map((s) => resolve(chunks, s).slice(repo.length + 1).replace(/\\/g, '/'));
    const runChunk = readdirSync(chunks).filter((f) => f.endsWith('.js')).find((f) => mapped(f).includes('pipeline/run.ts'));
    expect(runChunk).toBeDefined();
    const sources = [...staticSources(join(chunks, runChunk!))].map((s) => s.slice(repo.length + 1).replace(/\\/g, '/'));
    expect(sources).toContain('pipeline/select/scan.ts');
    expect(sources).toContain('stages/read/format-of.ts');
    for (const reader of ['stages/read/open.ts', 'stages/read/wav.ts', 'stages/read/flac.ts', 'stages/read/csv.ts', 'stages/read/hdf5.ts']) expect(sources).not.toContain(reader);
  });

  it('a worker thread loads the reducing code, not the store, the cache keys or the table code', () => {
    const sources = [...staticSources(join(repo, 'dist', 'pipeline', 'reduce', 'worker.js'))].map((s) => s.slice(repo.length + 1).replace(/\\/g, '/'));
    expect(sources).toContain('pipeline/reduce/compute.ts');
    expect(sources).toContain('pipeline/store/record.ts'); // a worker encodes the entries it returns
    for (const absent of ['pipeline/store/store.ts', 'pipeline/plan/cache.ts', 'pipeline/outputs/slice.ts', 'pipeline/declare/canonical-json.ts']) expect(sources).not.toContain(absent);
    expect(sources.some((s) => s.includes('apache-arrow'))).toBe(false);
  });
});
