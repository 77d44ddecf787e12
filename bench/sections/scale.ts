// Re-runs into the same output folder, and an archive of many small recordings over years.
import { readFileSync, writeFileSync } from 'node:fs';
import { cpus } from 'node:os';
import { join } from 'node:path';
import { makeManyTinyRecordings } from '../generate.js';
import { quern, repo, row, say, work, type QuernMeasurement } from '../harness.js';

export function reruns(full: string, kept: string, first: QuernMeasurement): void {
  const cores = cpus().length;
  say('\nre-runs into the same output folder (--jobs ' + cores + ')');
  const again = quern(full, cores, kept);
  say(row(`nothing changed (${again.recomputed} recomputed, ${again.reused} reused)`, again) + `  ${((again.seconds / first.seconds) * 100).toFixed(1)} % of the first run`);
  const spec = readFileSync(join(repo, 'schemas', 'reduction.default.yaml'), 'utf8');
  writeFileSync(join(full, 'reduction.yaml'), spec.replace('low_hz: 2500, high_hz: 4500', 'low_hz: 3000, high_hz: 5000'));
  const envelopeOnly = quern(full, cores, kept);
  say(row('envelope filter changed (envelope recomputed)', envelopeOnly) + `  ${((envelopeOnly.seconds / first.seconds) * 100).toFixed(1)} % of the first run`);
}

export function manySmall(count = Number(process.env.QUERN_BENCH_TINY ?? 100_000)): void {
  const cores = cpus().length;
  say(`\nan archive of ${count.toLocaleString('en')} small recordings over three years (statistics only, --jobs ${cores})`);
  const tiny = join(work, 'tiny'), tinyOut = join(work, 'tiny-out');
  makeManyTinyRecordings(tiny, count);
  const first = quern(tiny, cores, tinyOut);
  say(`  first reduction of all                         ${first.recordings} recordings ${first.seconds.toFixed(2).padStart(7)} s ${first.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`);
  const nightly = quern(tiny, cores, tinyOut, '7d');
  say(`  nightly run, --since 7d (scan all, reduce none) ${nightly.recordings} recordings ${nightly.seconds.toFixed(2).padStart(7)} s ${nightly.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`);
  const rescan = quern(tiny, cores, tinyOut);
  say(`  whole archive again, nothing changed           ${rescan.recordings} recordings ${rescan.seconds.toFixed(2).padStart(7)} s ${rescan.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`);
}
