// Trends over a long history: a nightly run that reduces nothing new still reads every stored result once for the baselines.
import { existsSync, writeFileSync } from 'node:fs';
import { cpus } from 'node:os';
import { join } from 'node:path';
import { makeManyTinyRecordings } from '../generate.js';
import { quern, say, work } from '../harness.js';

/** Reuses the archive of many small recordings (and its reduced folder) when an earlier section made it. */
export function trendsOverHistory(count = Number(process.env.QUERN_BENCH_TINY ?? 100_000)): void {
  const cores = cpus().length;
  const tiny = join(work, 'tiny'), tinyOut = join(work, 'tiny-out');
  if (!existsSync(tiny)) { makeManyTinyRecordings(tiny, count); quern(tiny, cores, tinyOut); }
  say(`\ntrends over the history of ${count.toLocaleString('en')} small recordings (statistics and trends, --jobs ${cores})`);
  const without = quern(tiny, cores, tinyOut, '7d');
  writeFileSync(join(tiny, 'reduction.yaml'), 'statistics: {}\ntrends: {}\n');
  const withTrends = quern(tiny, cores, tinyOut, '7d');
  writeFileSync(join(tiny, 'reduction.yaml'), 'statistics: {}\n');
  say(`  nightly run, --since 7d, no trends             ${without.recordings} recordings ${without.seconds.toFixed(2).padStart(7)} s ${without.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`);
  say(`  nightly run, --since 7d, trends over all       ${withTrends.recordings} recordings ${withTrends.seconds.toFixed(2).padStart(7)} s ${withTrends.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`);
}
