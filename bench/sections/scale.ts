// Scale: unchanged re-runs as a share of the full run on two archive shapes, the scaling from one worker to two, and an
// archive of many small recordings (the first reduction, its peak memory, a nightly period, the whole archive again).
import { readFileSync, writeFileSync } from 'node:fs';
import { cpus } from 'node:os';
import { join } from 'node:path';
import { makeBenchArchive, makeManyTinyRecordings } from '../generate.js';
import { command, nodeAlone, pairedScaling, quern, neededReduceScaling, reducePhaseScaling, repo, say, scalingCeiling, sideBySideCeiling, spread, work, type QuernMeasurement } from '../harness.js';

const pct = (a: QuernMeasurement, b: QuernMeasurement) => `${((a.wallSeconds / b.wallSeconds) * 100).toFixed(1)} % of the full run (in-process ${((a.seconds / b.seconds) * 100).toFixed(1)} %)`;
const line = (label: string, m: QuernMeasurement, tail = '') =>
  `  ${label.padEnd(54)} ${String(m.recordings).padStart(6)} recordings ${m.wallSeconds.toFixed(2).padStart(7)} s whole command (${m.seconds.toFixed(2)} s in-process) ${m.peakRssMB.toFixed(0).padStart(5)} MB peak RSS${tail ? `  ${tail}` : ''}`;

/** Re-runs into the same output folder: nothing changed (twice: the first also confirms recently written files by content), then one spec section changed. */
export function reruns(full: string, kept: string, first: QuernMeasurement, label = 'bench archive (8 recordings × 4 channels × 122 s)'): void {
  const cores = cpus().length;
  say(`\nre-runs into the same output folder, ${label}, --jobs ${cores}`);
  say(line('full run', first));
  const again = quern(full, cores, kept);
  say(line(`nothing changed (${again.recomputed} recomputed, ${again.reused} reused)`, again, pct(again, first)));
  const third = quern(full, cores, kept);
  say(line('nothing changed, once more', third, pct(third, first)));
  // The command line itself (bench/measure.ts, timed above, leaves out parsing the command line: some 0.03 s).
  const asRun = spread(Array.from({ length: 7 }, () => command(['reduce', full, '--out', kept, '--jobs', String(cores)])));
  say(`  ${'nothing changed, the command as a user runs it'.padEnd(54)} ${asRun.text}: ${((100 * asRun.median) / first.wallSeconds).toFixed(1)} % of the full run`);
  // The floor under any command: Node itself starting and stopping with nothing to run.
  const bare = spread(Array.from({ length: 7 }, () => nodeAlone()));
  say(`  ${'Node alone (node -e 0), for comparison'.padEnd(54)} ${bare.text}: ${((100 * bare.median) / first.wallSeconds).toFixed(1)} % of the full run`);
  const spec = readFileSync(join(repo, 'schemas', 'reduction.default.yaml'), 'utf8');
  writeFileSync(join(full, 'reduction.yaml'), spec.replace('low_hz: 2500, high_hz: 4500', 'low_hz: 3000, high_hz: 5000'));
  const envelopeOnly = quern(full, cores, kept);
  say(line('envelope filter changed (envelope recomputed)', envelopeOnly, pct(envelopeOnly, first)));
}

/** Short recordings (8 × 4 channels × 60 s, full default features): one worker against two, then re-runs. */
export async function shortRecordings(): Promise<void> {
  const short = join(work, 'short-recordings');
  makeBenchArchive(short, Array.from({ length: 8 }, (_, i) => ({ name: `s${i}.wav`, frames: 60 * 25_600 })));
  say('\nshort recordings (8 × 4 channels × 60 s at 25.6 kHz, full default features): one worker against two');
  const one = quern(short, 1);
  say(line('--jobs 1', one));
  const kept = join(work, 'short-kept');
  const two = quern(short, 2, kept);
  say(line('--jobs 2', two));
  say(`  --jobs 2 runs ${(one.wallSeconds / two.wallSeconds).toFixed(2)}× as fast as --jobs 1 (whole command; in-process ${(one.seconds / two.seconds).toFixed(2)}×; processor time ${two.cpuSeconds.toFixed(2)} s against ${one.cpuSeconds.toFixed(2)} s)`);
  say(`  ${reducePhaseScaling(one, two, 2)}`);
  say(`  ${neededReduceScaling(one, two, 2)}`);
  say(`  ${pairedScaling(one, two, short, 2)}`);
  say(`  ${scalingCeiling(one, 2)}`);
  say(`  ${await sideBySideCeiling(short, 2)}`);
  reruns(short, kept, two, 'short recordings');
}

export function manySmall(count = Number(process.env.QUERN_BENCH_TINY ?? 100_000)): void {
  const cores = cpus().length;
  say(`\nan archive of ${count.toLocaleString('en')} small recordings over three years (statistics only, --jobs ${cores})`);
  const tiny = join(work, 'tiny'), tinyOut = join(work, 'tiny-out');
  makeManyTinyRecordings(tiny, count);
  const first = quern(tiny, cores, tinyOut);
  say(line('first reduction of all (peak memory of the one run)', first));
  const again = quern(tiny, cores, tinyOut);
  say(line('whole archive again, nothing changed (outputs kept)', again));
  const nightly = quern(tiny, cores, tinyOut, '7d');
  say(line('nightly run, --since 7d (scan all, reduce none)', nightly));
  // the nightly run's tables hold its week only, so the whole archive's tables are written again from the stored results
  const rescan = quern(tiny, cores, tinyOut);
  say(line('whole archive after the nightly run (tables rewritten)', rescan));
}

/**
 * An archive whose every channel is to be checked (tones clipped by the converter, a misranged rig night after night),
 * beside the same archive unclipped: the report pictures only its first channels, so the difference stays bounded.
 */
export function everyChannelFlagged(count = 1000): void {
  const cores = cpus().length;
  say(`\nan archive whose every channel clips (${count} recordings × 4 channels × 0.25 s, full default features, --jobs ${cores}) beside the same unclipped`);
  for (const [label, level] of [['unclipped', 0.3], ['every channel clipped (a fail each)', 1.2]] as const) {
    const dir = join(work, `flagged-${level}`);
    makeBenchArchive(dir, Array.from({ length: count }, (_, i) => ({ name: `r${i}.wav`, frames: 6400, level })));
    say(line(label, quern(dir, cores)));
  }
}
