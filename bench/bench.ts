// npm run bench: throughput and peak memory on generated archives, beside a numpy/scipy peer (a benchmark, not a test).
// npm run bench -- --profile: CPU profiles of one statistics-only and one full reduction instead, and where the time goes.
import { rmSync } from 'node:fs';
import { availableParallelism, cpus, totalmem } from 'node:os';
import { say, work } from './harness.js';
import { profile } from './profile.js';
import { everyChannelFlagged, manySmall, reruns, shortRecordings } from './sections/scale.js';
import { collectorShare, fixedCost } from './sections/start.js';
import { summary, throughput } from './sections/throughput.js';
import { trendsOverHistory } from './sections/trends.js';
import { formats } from './sections/formats.js';

try {
  say(`quern bench — ${cpus()[0]?.model ?? 'unknown CPU'}, ${cpus().length} cores, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, Node ${process.version}`);
  if (process.argv.includes('--profile')) profile();
  else {
    const { full, kept, first, shapes, statsRate, statsReduceRate, archives } = await throughput();
    fixedCost();
    collectorShare([{ label: 'short 24-bit recordings, full set', archive: archives.many }, { label: 'one 16-bit recording, statistics', archive: archives.long }]);
    // At the default, every core a worker: where the workers optimise their code in their own threads (engine-settings.ts).
    collectorShare([{ label: 'short 24-bit recordings, full set', archive: archives.many }], { jobs: availableParallelism() });
    reruns(full, kept, first);
    await shortRecordings();
    manySmall();
    everyChannelFlagged();
    trendsOverHistory();
    formats();
    summary(shapes, statsRate, statsReduceRate);
  }
} finally {
  rmSync(work, { recursive: true, force: true });
}
