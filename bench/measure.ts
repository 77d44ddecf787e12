// One measured run in a fresh process: reduces an archive and prints wall time and the process's peak memory as JSON.
// Usage: node dist/bench/measure.js ARCHIVE OUT JOBS [SINCE]
import { runReduce } from '../pipeline/run.js';
import { parseWhen } from '../pipeline/select/select.js';
import { settleEngine } from '../pipeline/engine-settings.js';
import { readFileSync } from 'node:fs';

/**
 * This process's own peak resident memory: the kernel's high-water mark of its memory (VmHWM). getrusage's maxRSS also
 * counts what the parent held when it started this process (Linux carries the mark across fork and exec), so a bench
 * that had grown to 400 MB would report at least that for every run it started.
 */
function peakRssMB(): number {
  const hwm = (() => { try { return readFileSync('/proc/self/status', 'utf8').match(/^VmHWM:\s+(\d+) kB/m); } catch { return null; } })();
  return hwm ? Number(hwm[1]) / 1024 : process.resourceUsage().maxRSS / 1024;
}

// as the command line does
settleEngine();

const [archive, out, jobs, since] = process.argv.slice(2);
const t0 = performance.now();
const { record } = await runReduce({ archive, out, jobs: Number(jobs ?? 1), since: since ? parseWhen(since) : null });
const seconds = (performance.now() - t0) / 1000;
const samples = record.recordings.reduce((s, r) => s + r.frames * r.rows, 0);
// The peak and the CPU time cover the whole process, worker threads and V8's own helper threads included.
const cpu = process.cpuUsage();
process.stdout.write(JSON.stringify({ seconds, reduceSeconds: record.timings.reduce_s, samples, peakRssMB: peakRssMB(), cpuSeconds: (cpu.user + cpu.system) / 1e6, failed: record.counts.failed, recomputed: record.counts.recomputed, reused: record.counts.reused, recordings: record.counts.selected }) + '\n');
