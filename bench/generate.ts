// Writes long generated WAV recordings block by block, so the benchmark archive never sits in memory.
import { closeSync, mkdirSync, openSync, utimesSync, writeSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';

/** A noise seed from a file's name, so that recordings of one archive differ as a rig's nights do (spectra, stored sizes). */
export function seedOf(path: string): number {
  let h = 12345;
  for (const ch of basename(path)) h = (Math.imul(h, 31) + ch.charCodeAt(0)) & 0x7fffffff;
  return h;
}

/**
 * A 16- or 24-bit PCM WAV of `channels` channels: tones plus a cheap pseudo-random noise, `frames` long. The tones' peak is
 * `level` of full scale; above about 0.95 the converter's extreme codes clip them. The noise's seed follows the file's name.
 */
export function writeLongWav(path: string, { frames, channels = 4, sampleRate = 25600, bits = 16, level = 0.3, seed = seedOf(path) }: { frames: number; channels?: number; sampleRate?: number; bits?: 16 | 24; level?: number; seed?: number }): void {
  const width = bits / 8;
  const dataBytes = frames * channels * width;
  const header = Buffer.alloc(44);
  header.write('RIFF', 0, 'latin1'); header.writeUInt32LE(36 + dataBytes, 4); header.write('WAVEfmt ', 8, 'latin1');
  header.writeUInt32LE(16, 16); header.writeUInt16LE(1, 20); header.writeUInt16LE(channels, 22); header.writeUInt32LE(sampleRate, 24);
  header.writeUInt32LE(sampleRate * channels * width, 28); header.writeUInt16LE(channels * width, 32); header.writeUInt16LE(bits, 34);
  header.write('data', 36, 'latin1'); header.writeUInt32LE(dataBytes, 40);
  const fd = openSync(path, 'w');
  writeSync(fd, header);
  const block = 1 << 16;
  const buf = Buffer.alloc(block * channels * width);
  const full = 2 ** (bits - 1) - 1;
  for (let start = 0; start < frames; start += block) {
    const n = Math.min(block, frames - start);
    for (let i = 0; i < n; i++) {
      const t = (start + i) / sampleRate;
      for (let c = 0; c < channels; c++) {
        seed = (seed * 1103515245 + 12345) & 0x7fffffff;
        const v = level * Math.sin(2 * Math.PI * (50 + 100 * c) * t) + 0.1 * (seed / 0x7fffffff - 0.5);
        buf.writeIntLE(Math.max(-full - 1, Math.min(full, Math.round(v * full))), (i * channels + c) * width, width);
      }
    }
    writeSync(fd, buf, 0, n * channels * width);
  }
  closeSync(fd);
}

/** A recording of the bench archives: its name, length, and optionally its channel count (4), bits (16) and tone level (0.3 of full scale). */
export interface BenchRecording { name: string; frames: number; channels?: number; bits?: 16 | 24; level?: number }

/** An archive folder holding recordings declared as accelerometers (so every feature group applies) and, optionally, a spec.
 *  Recordings with the same channel count share a group, matched by a name prefix `c<channels>-` when counts differ. */
export function makeBenchArchive(dir: string, recordings: BenchRecording[], spec?: string): void {
  mkdirSync(dir, { recursive: true });
  const counts = [...new Set(recordings.map((r) => r.channels ?? 4))];
  const nameOf = (r: BenchRecording) => (counts.length > 1 ? `c${r.channels ?? 4}-${r.name}` : r.name);
  for (const r of recordings) writeLongWav(join(dir, nameOf(r)), { frames: r.frames, channels: r.channels ?? 4, bits: r.bits ?? 16, level: r.level });
  const groups = counts.map((count) => {
    const channels = Array.from({ length: count }, (_, i) => `      - { name: acc${i + 1}, quantity: acceleration, unit: m/s^2, scale: ${BENCH_SCALE} }`).join('\n');
    return `  - name: bench${counts.length > 1 ? count : ''}\n    match: "${counts.length > 1 ? `c${count}-` : ''}*.wav"\n    sample_rate: 25600\n    channels:\n${channels}\n`;
  });
  writeFileSync(join(dir, 'archive.yaml'), `groups:\n${groups.join('')}`);
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
