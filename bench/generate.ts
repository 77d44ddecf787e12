// Writes long generated WAV recordings block by block, so the benchmark archive never sits in memory.
import { closeSync, mkdirSync, openSync, utimesSync, writeSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';

/** A 16-bit PCM WAV of `channels` channels: tones plus a cheap pseudo-random noise, `frames` long. */
export function writeLongWav(path: string, { frames, channels = 4, sampleRate = 25600 }: { frames: number; channels?: number; sampleRate?: number }): void {
  const dataBytes = frames * channels * 2;
  const header = Buffer.alloc(44);
  header.write('RIFF', 0, 'latin1'); header.writeUInt32LE(36 + dataBytes, 4); header.write('WAVEfmt ', 8, 'latin1');
  header.writeUInt32LE(16, 16); header.writeUInt16LE(1, 20); header.writeUInt16LE(channels, 22); header.writeUInt32LE(sampleRate, 24);
  header.writeUInt32LE(sampleRate * channels * 2, 28); header.writeUInt16LE(channels * 2, 32); header.writeUInt16LE(16, 34);
  header.write('data', 36, 'latin1'); header.writeUInt32LE(dataBytes, 40);
  const fd = openSync(path, 'w');
  writeSync(fd, header);
  const block = 1 << 16;
  const buf = Buffer.alloc(block * channels * 2);
  let seed = 12345;
  for (let start = 0; start < frames; start += block) {
    const n = Math.min(block, frames - start);
    for (let i = 0; i < n; i++) {
      const t = (start + i) / sampleRate;
      for (let c = 0; c < channels; c++) {
        seed = (seed * 1103515245 + 12345) & 0x7fffffff;
        const v = 0.3 * Math.sin(2 * Math.PI * (50 + 100 * c) * t) + 0.1 * (seed / 0x7fffffff - 0.5);
        buf.writeInt16LE(Math.round(v * 32767), (i * channels + c) * 2);
      }
    }
    writeSync(fd, buf, 0, n * channels * 2);
  }
  closeSync(fd);
}

/** An archive folder holding 4-channel recordings declared as accelerometers (so every feature group applies) and, optionally, a spec. */
export function makeBenchArchive(dir: string, recordings: { name: string; frames: number }[], spec?: string): void {
  mkdirSync(dir, { recursive: true });
  for (const r of recordings) writeLongWav(join(dir, r.name), { frames: r.frames, channels: 4 });
  const channels = [1, 2, 3, 4].map((i) => `      - { name: acc${i}, quantity: acceleration, unit: m/s^2, scale: ${BENCH_SCALE} }`).join('\n');
  writeFileSync(join(dir, 'archive.yaml'), `groups:\n  - name: bench\n    match: "*.wav"\n    sample_rate: 25600\n    channels:\n${channels}\n`);
  if (spec) writeFileSync(join(dir, 'reduction.yaml'), spec);
}

/** Engineering value of full scale in the bench archives, m/s². */
export const BENCH_SCALE = 50;

/** Many tiny recordings in nested night folders (an archive of years), for timing the scan of already reduced archives. */
export function makeManyTinyRecordings(dir: string, count: number): void {
  const perFolder = 500;
  for (let i = 0; i < count; i++) {
    const folder = join(dir, `y${Math.floor(i / 50000)}`, `n${Math.floor(i / perFolder) % 100}`);
    if (i % perFolder === 0) mkdirSync(folder, { recursive: true });
    writeLongWav(join(folder, `c${i}.wav`), { frames: 64, channels: 1, sampleRate: 1000 });
    // Captures spread evenly over the last three years, one every few minutes… the newest today.
    const when = new Date(Date.now() - ((count - 1 - i) / count) * 3 * 365 * 86_400_000);
    utimesSync(join(folder, `c${i}.wav`), when, when);
  }
  writeFileSync(join(dir, 'archive.yaml'), 'groups:\n  - name: tiny\n    match: "**/*.wav"\n');
  writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\n');
}
