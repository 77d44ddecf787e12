// npm run bench: throughput and peak memory on generated archives, beside a numpy/scipy peer (a benchmark, not a test).
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { cpus, tmpdir, totalmem } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { BENCH_SCALE, makeBenchArchive, makeManyTinyRecordings } from './generate.js';

interface Measurement { seconds: number; samples: number; peakRssMB: number; scipy?: string }

const here = dirname(fileURLToPath(import.meta.url));
const repo = join(here, '..', '..');
const work = mkdtempSync(join(tmpdir(), 'quern-bench-'));
const say = (s: string) => process.stdout.write(s + '\n');

/** One run of quern in a fresh process (bench/measure.ts), so peak RSS is this run's alone; a fresh output folder unless one is given. */
function quern(archive: string, jobs: number, out = join(work, `out-${Math.random()}`), since?: string): Measurement & { recomputed: number; reused: number; recordings: number } {
  const text = execFileSync(process.execPath, [join(here, 'measure.js'), archive, out, String(jobs), ...(since ? [since] : [])], { encoding: 'utf8' });
  return JSON.parse(text.trim().split('\n').pop()!);
}

/** The numpy/scipy peer, where Debian's python3 with scipy is installed. */
function peer(archive: string): Measurement | null {
  const python = ['/usr/bin/python3', 'python3'].find((p) => spawnSync(p, ['-c', 'import scipy'], { stdio: 'ignore' }).status === 0);
  if (!python) return null;
  const r = spawnSync(python, [join(repo, 'bench', 'peer.py'), archive, String(BENCH_SCALE)], { encoding: 'utf8' });
  if (r.status !== 0) { say(`peer failed: ${r.stderr.trim().split('\n').pop()}`); return null; }
  return JSON.parse(r.stdout.trim().split('\n').pop()!);
}

const row = (label: string, m: Measurement) =>
  `  ${label.padEnd(46)} ${(m.samples / 1e6).toFixed(0).padStart(5)} M samples ${m.seconds.toFixed(2).padStart(7)} s ${(m.samples / m.seconds / 1e6).toFixed(2).padStart(7)} M samples/s ${m.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`;

try {
  say(`quern bench — ${cpus()[0]?.model ?? 'unknown CPU'}, ${cpus().length} cores, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, Node ${process.version}`);
  say('generating archives (16-bit PCM WAV, 4 channels at 25.6 kHz, declared as accelerometers)…');
  const statsOnly = 'statistics: {}\n';
  const short = join(work, 'short'), long = join(work, 'long'), full = join(work, 'full');
  makeBenchArchive(short, [{ name: 'short.wav', frames: 2_500_000 }], statsOnly); // 10 M samples in one recording
  makeBenchArchive(long, [{ name: 'long.wav', frames: 15_000_000 }], statsOnly); //  60 M samples in one recording
  makeBenchArchive(full, Array.from({ length: 8 }, (_, i) => ({ name: `r${i}.wav`, frames: 3_125_000 }))); // 100 M samples, 8 recordings

  say('\nstatistics only: memory does not grow with recording length');
  say(row('one recording, 10 M samples, --jobs 1', quern(short, 1)));
  say(row('one recording, 60 M samples, --jobs 1', quern(long, 1)));

  say('\nfull default feature set (schemas/reduction.default.yaml), envelope on every channel');
  const one = quern(full, 1);
  say(row('quern, --jobs 1', one));
  const cores = cpus().length, kept = join(work, 'kept');
  const all = quern(full, cores, kept);
  say(row(`quern, --jobs ${cores}`, all));
  say(`  --jobs ${cores} runs ${(one.seconds / all.seconds).toFixed(2)}× as fast as --jobs 1`);
  const p = peer(full);
  if (p) {
    say(row(`numpy/scipy peer (scipy ${p.scipy}, whole files)`, p));
    say(`  quern --jobs 1 runs ${((one.samples / one.seconds) / (p.samples / p.seconds)).toFixed(2)}× the peer's throughput`);
  } else {
    say('  (peer skipped: no python3 with scipy; apt-get install python3-scipy)');
  }

  say('\nre-runs into the same output folder (--jobs ' + cores + ')');
  const again = quern(full, cores, kept);
  say(row(`nothing changed (${again.recomputed} recomputed, ${again.reused} reused)`, again) + `  ${((again.seconds / all.seconds) * 100).toFixed(1)} % of the first run`);
  const spec = readFileSync(join(repo, 'schemas', 'reduction.default.yaml'), 'utf8');
  writeFileSync(join(full, 'reduction.yaml'), spec.replace('low_hz: 2500, high_hz: 4500', 'low_hz: 3000, high_hz: 5000'));
  const envelopeOnly = quern(full, cores, kept);
  say(row('envelope filter changed (envelope recomputed)', envelopeOnly) + `  ${((envelopeOnly.seconds / all.seconds) * 100).toFixed(1)} % of the first run`);

  const tinyCount = Number(process.env.QUERN_BENCH_TINY ?? 100_000);
  say(`\nan archive of ${tinyCount.toLocaleString('en')} small recordings over three years (statistics only, --jobs ${cores})`);
  const tiny = join(work, 'tiny'), tinyOut = join(work, 'tiny-out');
  makeManyTinyRecordings(tiny, tinyCount);
  const first = quern(tiny, cores, tinyOut);
  say(`  first reduction of all                         ${first.recordings} recordings ${first.seconds.toFixed(2).padStart(7)} s ${first.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`);
  const nightly = quern(tiny, cores, tinyOut, '7d');
  say(`  nightly run, --since 7d (scan all, reduce none) ${nightly.recordings} recordings ${nightly.seconds.toFixed(2).padStart(7)} s ${nightly.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`);
  const rescan = quern(tiny, cores, tinyOut);
  say(`  whole archive again, nothing changed           ${rescan.recordings} recordings ${rescan.seconds.toFixed(2).padStart(7)} s ${rescan.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`);
} finally {
  rmSync(work, { recursive: true, force: true });
}
