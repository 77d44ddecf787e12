// Throughput and memory of one reduction on two archive shapes, beside the numpy/scipy peer: long 16-bit recordings, and
// many short 24-bit recordings of 4 to 8 channels. Statistics alone (quality flags included) and the full default set.
import { join } from 'node:path';
import { cpus } from 'node:os';
import { BENCH_SCALE, makeBenchArchive } from '../generate.js';
import { pairedScaling, peer, quern, neededReduceScaling, reducePhaseScaling, row, say, scalingCeiling, sideBySideCeiling, arithmeticCeiling, work, type Measurement, type QuernMeasurement } from '../harness.js';

/** What the summary table needs from this section. */
export interface ShapeResult { shape: string; quern: Measurement; peer: Measurement | null }

const rate = (m: Measurement) => m.samples / m.seconds;
/** quern's run as a user times it: the whole command, start-up included, like the peer. */
const whole = (m: QuernMeasurement): QuernMeasurement => ({ ...m, seconds: m.wallSeconds });

/** Runs the section; returns the archive and the output folder of the full run (for the re-run section) and each shape's figures. */
export async function throughput(): Promise<{ full: string; kept: string; first: QuernMeasurement; shapes: ShapeResult[]; statsRate: number; statsReduceRate: number; archives: { long: string; many: string } }> {
  say('generating archives (25.6 kHz, declared as accelerometers, so every feature group applies to every channel)…');
  const statsOnly = 'statistics: {}\n';
  const short = join(work, 'short'), long = join(work, 'long'), full = join(work, 'full'), many = join(work, 'many');
  makeBenchArchive(short, [{ name: 'short.wav', frames: 2_500_000 }], statsOnly); // 10 M samples in one 16-bit recording
  makeBenchArchive(long, [{ name: 'long.wav', frames: 15_000_000 }], statsOnly); //  60 M samples in one 16-bit recording
  makeBenchArchive(full, Array.from({ length: 8 }, (_, i) => ({ name: `r${i}.wav`, frames: 3_125_000 }))); // 100 M samples, 8 long 16-bit recordings
  // 36.9 M samples: 24 short 24-bit recordings of 10 s with 4, 6 or 8 channels.
  makeBenchArchive(many, Array.from({ length: 24 }, (_, i) => ({ name: `r${String(i).padStart(2, '0')}.wav`, frames: 256_000, channels: [4, 6, 8][i % 3], bits: 24 as const })));

  say('\nstatistics and every quality flag, 16-bit PCM, one worker: memory does not grow with recording length');
  say(row('one recording, 10 M samples, --jobs 1', whole(quern(short, 1))));
  const stats = whole(quern(long, 1));
  say(row('one recording, 60 M samples, --jobs 1', stats));
  say(`  of which the reduce phase ${stats.reduceSeconds.toFixed(2)} s: ${(stats.samples / stats.reduceSeconds / 1e6).toFixed(1)} M samples/s once started (the rest: start-up, declaration, writing)`);

  say('\nfull default feature set (schemas/reduction.default.yaml), envelope on every channel');
  const runOne = quern(full, 1), one = whole(runOne);
  say(row('long 16-bit recordings: quern, --jobs 1', one));
  const cores = cpus().length, kept = join(work, 'kept');
  const runAll = quern(full, cores, kept), all = whole(runAll);
  say(row(`long 16-bit recordings: quern, --jobs ${cores}`, all));
  say(`  --jobs ${cores} runs ${(one.seconds / all.seconds).toFixed(2)}× as fast as --jobs 1 (processor time ${all.cpuSeconds.toFixed(2)} s against ${one.cpuSeconds.toFixed(2)} s)`);
  say(`  ${reducePhaseScaling(one, all, cores)}`);
  say(`  ${neededReduceScaling(one, all, cores)}`);
  say(`  ${pairedScaling(runOne, runAll, full, cores)}`);
  say(`  ${scalingCeiling(one, cores)}`);
  say(`  ${await sideBySideCeiling(full, cores)}`);
  say(`  ${await arithmeticCeiling(cores)}`);
  const peerLong = peer(full, BENCH_SCALE);
  if (peerLong) say(row(`long 16-bit recordings: numpy/scipy peer`, peerLong));
  const manyOne = whole(quern(many, 1));
  say(row('short 24-bit recordings: quern, --jobs 1', manyOne));
  const peerMany = peer(many, BENCH_SCALE);
  if (peerMany) say(row('short 24-bit recordings: numpy/scipy peer', peerMany));
  if (!peerLong) say('  (peer skipped: no python3 with scipy; apt-get install python3-scipy)');
  else say(`  numpy/scipy peer: scipy ${peerLong.scipy}, whole files in memory, timed as whole processes like quern`);
  return {
    full, kept, first: runAll, archives: { long, many }, statsRate: rate(stats), statsReduceRate: stats.samples / stats.reduceSeconds,
    shapes: [{ shape: 'long 16-bit, 4 channels, 8 × 122 s', quern: one, peer: peerLong }, { shape: 'short 24-bit, 4–8 channels, 24 × 10 s', quern: manyOne, peer: peerMany }],
  };
}

/** The targets: the full default set on one worker at 2× the peer on every shape (aiming at 3×), statistics at 30 M samples/s, under 300 MB. */
export function summary(shapes: ShapeResult[], statsRate: number, statsReduceRate: number): void {
  say('\none worker against the peer (full default feature set; targets: ≥ 2×, aiming at 3×)');
  say(`  ${'shape'.padEnd(40)} ${'quern'.padStart(16)} ${'peer'.padStart(16)} ${'ratio'.padStart(7)} ${'quern peak RSS'.padStart(15)}`);
  for (const s of shapes) {
    const ratio = s.peer ? (rate(s.quern) / rate(s.peer)).toFixed(2) + '×' : '—';
    say(`  ${s.shape.padEnd(40)} ${`${(rate(s.quern) / 1e6).toFixed(2)} M/s`.padStart(16)} ${s.peer ? `${(rate(s.peer) / 1e6).toFixed(2)} M/s`.padStart(16) : '—'.padStart(16)} ${ratio.padStart(7)} ${`${s.quern.peakRssMB.toFixed(0)} MB`.padStart(15)}`);
  }
  say(`  statistics and quality flags, 16-bit, one worker: ${(statsRate / 1e6).toFixed(1)} M samples/s whole process, ${(statsReduceRate / 1e6).toFixed(1)} M samples/s in the reduce phase (target ≥ 30)`);
}
