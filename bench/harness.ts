// What every bench section shares: a scratch folder, quern and the numpy/scipy peer run in fresh processes, and the table rows.
import { execFile, execFileSync, spawnSync } from 'node:child_process';
import { copyFileSync, mkdirSync, mkdtempSync, readdirSync, symlinkSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { median } from '../stages/dsp/median.js';

export interface Measurement { seconds: number; samples: number; peakRssMB: number; scipy?: string }
/** `seconds` is the run inside the process; `wallSeconds` the whole process (start-up included; bench/measure.ts is bundled
 *  like the command, but leaves out parsing the command line, some 0.03 s: `command` times the command line itself);
 *  `cpuSeconds` the processor time of every thread of the process (workers, V8's compiler and collector threads);
 *  `reduceSeconds` the reduce phase alone (workers started, recordings read and reduced; no start-up, declaration or writing). */
export type QuernMeasurement = Measurement & { cpuSeconds: number; recomputed: number; reused: number; recordings: number; wallSeconds: number; reduceSeconds: number };

export const here = dirname(fileURLToPath(import.meta.url));
export const repo = join(here, '..', '..');
export const work = mkdtempSync(join(tmpdir(), 'quern-bench-'));
export const say = (s: string) => process.stdout.write(s + '\n');

/** One run of quern in a fresh process (bench/measure.ts), so peak RSS is this run's alone; a fresh output folder unless one is given. */
export function quern(archive: string, jobs: number, out = join(work, `out-${Math.random()}`), since?: string, nodeOptions: string[] = []): QuernMeasurement {
  const t0 = performance.now();
  return measured(execFileSync(process.execPath, [...nodeOptions, join(here, 'measure.js'), archive, out, String(jobs), ...(since ? [since] : [])], { encoding: 'utf8', maxBuffer: 1 << 26 }), t0);
}

/** bench/measure.ts's figures (its last line), with the whole process's time from `t0`. */
const measured = (text: string, t0: number): QuernMeasurement => ({ ...JSON.parse(text.trim().split('\n').pop()!), wallSeconds: (performance.now() - t0) / 1000 });

/** Like `quern`, in a child process run beside others (the caller starts several and awaits them together). */
function quernBeside(archive: string, out: string): Promise<QuernMeasurement> {
  const t0 = performance.now();
  return new Promise((resolve, reject) => execFile(process.execPath, [join(here, 'measure.js'), archive, out, '1'], { encoding: 'utf8', maxBuffer: 1 << 26 }, (e, text) => {
    if (e) reject(e);
    else resolve(measured(text, t0));
  }));
}

/**
 * The ceiling of separate quern processes for `parts` workers: the archive's recordings dealt into `parts` archives (links
 * to the same files, the same declaration), each reduced by a one-worker quern alone, then all at once in separate
 * processes that share nothing but the machine. They slow each other down through what the cores share (caches, memory
 * bandwidth, on a virtual machine whatever the host shares) and through each process's own helper threads (V8's compiler
 * and collector, the main thread), which a one-worker run has a spare core for when alone. `arithmeticCeiling` measures
 * the machine without the second cause. Returns the reduce phases' speed-up (their sum alone against the longest side by
 * side), the median over `rounds`.
 */
export async function sideBySideCeiling(archive: string, parts: number, rounds = 3): Promise<string> {
  const wavs = readdirSync(archive).filter((f) => f.endsWith('.wav')).sort();
  const dirs = Array.from({ length: parts }, (_, k) => {
    const dir = join(work, `part-${k}-of-${parts}-${Math.random()}`);
    mkdirSync(dir);
    copyFileSync(join(archive, 'archive.yaml'), join(dir, 'archive.yaml'));
    wavs.filter((_, i) => i % parts === k).forEach((f) => symlinkSync(join(archive, f), join(dir, f)));
    return dir;
  });
  const fresh = () => join(work, `out-${Math.random()}`);
  const ratios: number[] = [];
  for (let r = 0; r < rounds; r++) {
    const alone = dirs.map((d) => quern(d, 1).reduceSeconds);
    const together = (await Promise.all(dirs.map((d) => quernBeside(d, fresh())))).map((m) => m.reduceSeconds);
    ratios.push(alone.reduce((a, b) => a + b, 0) / Math.max(...together));
  }
  return `separate processes' ceiling: ${parts} one-worker runs on ${parts} parts of the archive, each alone and then side by side in separate processes, reduce ${median(Float64Array.from(ratios)).toFixed(2)}× as fast side by side as one after the other (median of ${rounds}: ${ratios.map((x) => `${x.toFixed(2)}×`).join(', ')})`;
}

/** One single-threaded loop of floating-point arithmetic over 256 KB, its own seconds (no start-up): it allocates nothing after its start. */
const ARITHMETIC = `const a = new Float64Array(1 << 15); for (let i = 0; i < a.length; i++) a[i] = Math.sin(i);
let s0 = 0, s1 = 0, s2 = 0, s3 = 0; const t0 = performance.now();
for (let r = 0; r < 12000; r++) for (let i = 0; i < a.length; i += 4) { s0 += a[i] * a[i]; s1 += a[i + 1] * a[i + 1]; s2 += a[i + 2] * a[i + 2]; s3 += a[i + 3] * a[i + 3]; }
process.stdout.write(String((performance.now() - t0) / 1000 + 0 * (s0 + s1 + s2 + s3)));`;

const arithmetic = (): Promise<number> => new Promise((resolve, reject) => execFile(process.execPath, ['-e', ARITHMETIC], { encoding: 'utf8' }, (e, text) => (e ? reject(e) : resolve(Number(text)))));

/**
 * The machine's own ceiling for `parts` busy cores: `parts` single-threaded arithmetic loops (nothing else running in their
 * processes) one after the other, then side by side. What separate quern processes lose beyond this is theirs.
 */
export async function arithmeticCeiling(parts: number, rounds = 5): Promise<string> {
  const ratios: number[] = [];
  for (let r = 0; r < rounds; r++) {
    let alone = 0;
    for (let k = 0; k < parts; k++) alone += await arithmetic();
    const together = await Promise.all(Array.from({ length: parts }, () => arithmetic()));
    ratios.push(alone / Math.max(...together));
  }
  return `the machine's own ceiling: ${parts} single-threaded arithmetic loops run ${median(Float64Array.from(ratios)).toFixed(2)}× as fast side by side as one after the other (median of ${rounds}: ${ratios.map((x) => `${x.toFixed(2)}×`).join(', ')})`;
}

/** quern's command line itself, as a user runs it (bench/measure.ts skips parsing the command line): its whole-command seconds. */
export function command(args: string[]): number {
  const t0 = performance.now();
  const r = spawnSync(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), ...args], { stdio: 'ignore' });
  const seconds = (performance.now() - t0) / 1000;
  if (r.status !== 0) throw new Error(`bench: quern ${args.join(' ')} exited with ${r.status}`);
  return seconds;
}

/** Node starting and stopping with nothing to run, in seconds: the floor under any command's time. */
export function nodeAlone(): number {
  const t0 = performance.now();
  spawnSync(process.execPath, ['-e', '0'], { stdio: 'ignore' });
  return (performance.now() - t0) / 1000;
}

/** Repeated timings in seconds: their median, and it with the least and the most as text. */
export function spread(seconds: number[]): { median: number; text: string } {
  const m = median(Float64Array.from(seconds));
  return { median: m, text: `median ${m.toFixed(3)} s of ${seconds.length} (${Math.min(...seconds).toFixed(3)}–${Math.max(...seconds).toFixed(3)} s)` };
}

/** The numpy/scipy peer, where Debian's python3 with scipy is installed. */
export function peer(archive: string, scale: number): Measurement | null {
  const python = ['/usr/bin/python3', 'python3'].find((p) => spawnSync(p, ['-c', 'import scipy'], { stdio: 'ignore' }).status === 0);
  if (!python) return null;
  const t0 = performance.now();
  const r = spawnSync(python, [join(repo, 'bench', 'peer.py'), archive, String(scale)], { encoding: 'utf8' });
  const seconds = (performance.now() - t0) / 1000;
  if (r.status !== 0) { say(`peer failed: ${r.stderr.trim().split('\n').pop()}`); return null; }
  return { ...JSON.parse(r.stdout.trim().split('\n').pop()!), seconds };
}

export const row = (label: string, m: Measurement) =>
  `  ${label.padEnd(46)} ${(m.samples / 1e6).toFixed(0).padStart(5)} M samples ${m.seconds.toFixed(2).padStart(7)} s ${(m.samples / m.seconds / 1e6).toFixed(2).padStart(7)} M samples/s ${m.peakRssMB.toFixed(0).padStart(6)} MB peak RSS`;

/** The reduce phase alone (the workers' part, from run.json's timings) against the rest of the run, which one thread does. */
export function reducePhaseScaling(one: QuernMeasurement, many: QuernMeasurement, jobs: number): string {
  const rest = (m: QuernMeasurement) => m.wallSeconds - m.reduceSeconds;
  return `the reduce phase alone: ${one.reduceSeconds.toFixed(2)} s on one worker, ${many.reduceSeconds.toFixed(2)} s on ${jobs}: ${(one.reduceSeconds / many.reduceSeconds).toFixed(2)}×; the rest of the command (start, declarations, scan, tables and reports) ${rest(one).toFixed(2)} s and ${rest(many).toFixed(2)} s`;
}

/**
 * The reduce phase's scaling the whole command would need for `target`× (the target of the two-worker line), the rest of
 * each command (start, declarations, scan, tables and reports) as measured: what one thread does limits the whole.
 */
export function neededReduceScaling(one: QuernMeasurement, many: QuernMeasurement, jobs: number, target = 1.85): string {
  const rest = many.wallSeconds - many.reduceSeconds, allowed = one.wallSeconds / target - rest;
  const need = allowed > 0 ? one.reduceSeconds / allowed : Infinity;
  const head = `for ${target.toFixed(2)}× as a whole command with these rests, the reduce phase would need`;
  return need <= jobs ? `${head} ${need.toFixed(2)}× on ${jobs} cores` : `${head} ${Number.isFinite(need) ? `${need.toFixed(2)}×, more than ${jobs} cores can give` : 'to take no time at all'}`;
}

/**
 * `jobs` workers against one, whole commands and the reduce phase alone, as the median over pairs run one after the other
 * (the given pair, then `pairs` − 1 more: one worker, then `jobs`, and again): on a shared machine a single pair swings by a
 * tenth either way as the machine speeds up or slows down between its two runs.
 */
export function pairedScaling(one: QuernMeasurement, many: QuernMeasurement, archive: string, jobs: number, pairs = 3): string {
  const whole = [one.wallSeconds / many.wallSeconds], reduce = [one.reduceSeconds / many.reduceSeconds];
  for (let i = 1; i < pairs; i++) {
    const a = quern(archive, 1), b = quern(archive, jobs);
    whole.push(a.wallSeconds / b.wallSeconds);
    reduce.push(a.reduceSeconds / b.reduceSeconds);
  }
  const text = (r: number[]) => `${median(Float64Array.from(r)).toFixed(2)}× (pairs: ${r.map((x) => `${x.toFixed(2)}×`).join(', ')})`;
  return `median of ${pairs} alternating pairs: ${text(whole)} whole command; the reduce phase alone ${text(reduce)}`;
}

/**
 * How fast `threads` workers could run at best, from the one-worker run: its processor time (every thread) shared out
 * evenly over the cores, against its wall time. A one-worker run that already keeps more than one core busy (the main
 * thread, V8's compiler and collector threads beside the worker) leaves less than a core's worth for a second worker.
 */
export function scalingCeiling(one: QuernMeasurement, cores: number): string {
  const busy = one.cpuSeconds / one.wallSeconds;
  return `--jobs 1 keeps ${busy.toFixed(2)} cores busy on average (${one.cpuSeconds.toFixed(2)} s of processor time in ${one.wallSeconds.toFixed(2)} s): on ${cores} cores, any number of workers doing the same work can run at most ${(Math.min(cores, cores / busy)).toFixed(2)}× as fast`;
}
