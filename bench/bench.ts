// npm run bench: throughput and peak memory of the reduction on generated archives (a benchmark, not a test).
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { cpus, tmpdir, totalmem } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { makeBenchArchive } from './generate.js';

const here = dirname(fileURLToPath(import.meta.url));
const work = mkdtempSync(join(tmpdir(), 'quern-bench-'));

function measure(archive: string, jobs: number) {
  const out = execFileSync(process.execPath, [join(here, 'measure.js'), archive, join(work, `out-${jobs}-${Math.random()}`), String(jobs)], { encoding: 'utf8' });
  return JSON.parse(out.trim().split('\n').pop()!) as { seconds: number; samples: number; peakRssMB: number; failed: number };
}

const row = (label: string, m: ReturnType<typeof measure>) =>
  `${label.padEnd(44)} ${(m.samples / 1e6).toFixed(0).padStart(6)} M samples ${m.seconds.toFixed(2).padStart(8)} s ${(m.samples / m.seconds / 1e6).toFixed(1).padStart(7)} M samples/s ${m.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`;

try {
  process.stdout.write(`quern bench — ${cpus()[0]?.model ?? 'unknown CPU'}, ${cpus().length} cores, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, Node ${process.version}\n`);
  process.stdout.write('generating archives (16-bit PCM WAV, 4 channels, 25.6 kHz)…\n');
  const short = join(work, 'short'), long = join(work, 'long'), many = join(work, 'many');
  makeBenchArchive(short, [{ name: 'short.wav', frames: 2_500_000 }]); //   10 M samples in one recording
  makeBenchArchive(long, [{ name: 'long.wav', frames: 15_000_000 }]); //    60 M samples in one recording
  makeBenchArchive(many, Array.from({ length: 8 }, (_, i) => ({ name: `r${i}.wav`, frames: 1_875_000 }))); // 60 M samples in 8 recordings
  process.stdout.write('statistics pass (default spec)\n');
  process.stdout.write(row('one recording, 10 M samples, --jobs 1', measure(short, 1)) + '\n');
  process.stdout.write(row('one recording, 60 M samples, --jobs 1', measure(long, 1)) + '\n');
  process.stdout.write(row('8 recordings, 60 M samples, --jobs 1', measure(many, 1)) + '\n');
  process.stdout.write(row(`8 recordings, 60 M samples, --jobs ${cpus().length}`, measure(many, cpus().length)) + '\n');
} finally {
  rmSync(work, { recursive: true, force: true });
}
