// Where the time goes: node --cpu-prof of a reduction (every thread writes a profile), summed by function's own time.
// The same by hand: node --cpu-prof --cpu-prof-dir=prof dist/pipeline/cli.js reduce ARCHIVE --jobs 1, then open the
// .cpuprofile files in Chrome's DevTools (Performance), or sum them with node dist/bench/profile-summary.js prof.
import { mkdtempSync } from 'node:fs';
import { join } from 'node:path';
import { makeBenchArchive } from './generate.js';
import { quern, say, work } from './harness.js';
import { summarise } from './profile-summary.js';

export function profile(): void {
  const stats = join(work, 'profile-stats'), full = join(work, 'profile-full');
  makeBenchArchive(stats, [{ name: 'long.wav', frames: 5_000_000 }], 'statistics: {}\n');
  makeBenchArchive(full, [{ name: 'r0.wav', frames: 2_000_000 }, { name: 'r1.wav', frames: 2_000_000 }]);
  for (const [label, archive] of [['statistics and quality flags, 20 M samples of 16-bit PCM', stats], ['full default feature set, 16 M samples of 16-bit PCM', full]]) {
    const dir = mkdtempSync(join(work, 'prof-'));
    const m = quern(archive, 1, undefined, undefined, ['--cpu-prof', `--cpu-prof-dir=${dir}`]);
    say(`\n${label}, --jobs 1: ${m.seconds.toFixed(2)} s whole process (profiling slows it); per thread (the worker does the reduction):`);
    summarise(dir);
  }
}

