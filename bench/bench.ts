// npm run bench: throughput and peak memory on generated archives, beside a numpy/scipy peer (a benchmark, not a test).
import { rmSync } from 'node:fs';
import { cpus, totalmem } from 'node:os';
import { say, work } from './harness.js';
import { manySmall, reruns, shortRecordings } from './sections/scale.js';
import { throughput } from './sections/throughput.js';
import { trendsOverHistory } from './sections/trends.js';

try {
  say(`quern bench — ${cpus()[0]?.model ?? 'unknown CPU'}, ${cpus().length} cores, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, Node ${process.version}`);
  const { full, kept, first } = throughput();
  reruns(full, kept, first);
  shortRecordings();
  manySmall();
  trendsOverHistory();
} finally {
  rmSync(work, { recursive: true, force: true });
}
