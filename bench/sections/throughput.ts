// Throughput and memory of one reduction: statistics alone, the full default feature set, one and more workers, beside the peer.
import { join } from 'node:path';
import { cpus } from 'node:os';
import { BENCH_SCALE, makeBenchArchive } from '../generate.js';
import { peer, quern, row, say, work, type QuernMeasurement } from '../harness.js';

/** Runs the section; returns the archive and the output folder of the full run, for the re-run section. */
export function throughput(): { full: string; kept: string; first: QuernMeasurement } {
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
  const p = peer(full, BENCH_SCALE);
  if (p) {
    say(row(`numpy/scipy peer (scipy ${p.scipy}, whole files)`, p));
    say(`  quern --jobs 1 runs ${((one.samples / one.seconds) / (p.samples / p.seconds)).toFixed(2)}× the peer's throughput`);
  } else {
    say('  (peer skipped: no python3 with scipy; apt-get install python3-scipy)');
  }
  return { full, kept, first: all };
}
