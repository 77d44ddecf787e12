// Sums CPU profiles (node --cpu-prof, one file per thread) by each function's own time, and the garbage collector's share.
// Usage: node dist/bench/profile-summary.js DIR
import { readdirSync, readFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const say = (s: string) => process.stdout.write(s + '\n');

interface ProfileNode { id: number; callFrame: { functionName: string; url: string; lineNumber: number } }
interface CpuProfile { nodes: ProfileNode[]; samples: number[]; timeDeltas: number[] }

/** Own time per function (ms) of one profile, largest first, with the total and the garbage collector's share. */
export function ownTimes(p: CpuProfile): { total: number; gc: number; idle: number; top: [string, number][] } {
  const byNode = new Map<number, number>();
  p.samples.forEach((id, i) => byNode.set(id, (byNode.get(id) ?? 0) + (p.timeDeltas[i] ?? 0) / 1000));
  const byName = new Map<string, number>();
  let total = 0;
  for (const n of p.nodes) {
    const t = byNode.get(n.id) ?? 0;
    total += t;
    const f = n.callFrame, name = `${f.functionName || '(anonymous)'} ${f.url ? `${basename(f.url)}:${f.lineNumber + 1}` : ''}`.trim();
    byName.set(name, (byName.get(name) ?? 0) + t);
  }
  return { total, gc: byName.get('(garbage collector)') ?? 0, idle: byName.get('(idle)') ?? 0, top: [...byName].sort((a, b) => b[1] - a[1]) };
}

/** Prints each thread's profile in a folder: busy time, GC share of it, and the functions taking the most. */
export function summarise(dir: string, rows = 15): void {
  for (const f of readdirSync(dir).filter((x) => x.endsWith('.cpuprofile')).sort()) {
    const { total, gc, idle, top } = ownTimes(JSON.parse(readFileSync(join(dir, f), 'utf8')));
    const busy = total - idle;
    say(`  ${f}: ${(busy / 1000).toFixed(2)} s busy, garbage collection ${((100 * gc) / busy).toFixed(1)} % of it`);
    for (const [name, t] of top.filter(([n]) => n !== '(idle)').slice(0, rows)) say(`    ${((100 * t) / busy).toFixed(1).padStart(5)} %  ${t.toFixed(0).padStart(6)} ms  ${name}`);
  }
}

if (process.argv[1] === fileURLToPath(import.meta.url) && process.argv[2]) summarise(process.argv[2], 25);
