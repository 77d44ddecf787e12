// One measured run in a fresh process: reduces an archive and prints wall time and the process's peak memory as JSON.
import { runReduce } from '../pipeline/run.js';

const [archive, out, jobs] = process.argv.slice(2);
const t0 = performance.now();
const { record } = await runReduce({ archive, out, jobs: Number(jobs ?? 1) });
const seconds = (performance.now() - t0) / 1000;
const samples = record.recordings.reduce((s, r) => s + r.frames * r.rows, 0);
// maxRSS covers the whole process, worker threads included (they share it).
process.stdout.write(JSON.stringify({ seconds, samples, peakRssMB: process.resourceUsage().maxRSS / 1024, failed: record.counts.failed }) + '\n');
