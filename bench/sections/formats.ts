// The same long recording read from a WAV file and from MAT-files (stored as -v6, compressed as MATLAB's default -v7, with
// channels as columns and as rows): what each reading path costs beside WAV, statistics and every quality flag, one worker.
import { copyFileSync, mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { BENCH_SCALE, writeLongWav } from '../generate.js';
import { wavAsMat } from '../generate-mat.js';
import { quern, say, spread, work } from '../harness.js';

export function formats(runs = 3, seconds = 120): void {
  const channels = 4, sampleRate = 25600, frames = seconds * sampleRate;
  const wav = join(work, 'formats-source.wav');
  writeLongWav(wav, { frames, channels, sampleRate });
  const acc = Array.from({ length: channels }, (_, i) => `      - { name: acc${i + 1}, quantity: acceleration, unit: m/s^2, scale: ${BENCH_SCALE} }`).join('\n');
  const shapes: { label: string; file: string; mat?: string; make: (path: string) => void }[] = [
    { label: 'WAV, 16-bit', file: 'r.wav', make: (p) => copyFileSync(wav, p) },
    { label: 'MAT -v6 (stored), samples × channels', file: 'r.mat', mat: '{ variables: data, channel_axis: 1, sample_rate_variable: fs }', make: (p) => wavAsMat(wav, p, { channels, sampleRate, compress: false }) },
    { label: 'MAT -v7 (compressed), samples × channels', file: 'r.mat', mat: '{ variables: data, channel_axis: 1, sample_rate_variable: fs }', make: (p) => wavAsMat(wav, p, { channels, sampleRate, compress: true }) },
    { label: 'MAT -v7 (compressed), channels × samples', file: 'r.mat', mat: '{ variables: data, channel_axis: 0, sample_rate_variable: fs }', make: (p) => wavAsMat(wav, p, { channels, sampleRate, compress: true, rowsAreChannels: true }) },
  ];
  say(`\nreading formats: one recording, ${channels} channels × ${seconds} s at ${sampleRate / 1000} kHz, int16, statistics and every quality flag, one worker, the median of ${runs} runs (each against WAV in the same minute)`);
  const archives = shapes.map((s, i) => {
    const dir = join(work, `formats-${i}`);
    mkdirSync(dir, { recursive: true });
    s.make(join(dir, s.file));
    writeFileSync(join(dir, 'archive.yaml'), `groups:\n  - name: rig\n    match: "r.*"\n${s.mat ? `    mat: ${s.mat}\n` : '    sample_rate: 25600\n'}    channels:\n${acc}\n`);
    writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\n');
    return dir;
  });
  const times = shapes.map(() => [] as number[]), peaks = shapes.map(() => [] as number[]);
  // Alternating, so that a slow minute falls on every shape alike.
  for (let r = 0; r < runs; r++) archives.forEach((a, i) => { const m = quern(a, 1); times[i].push(m.wallSeconds); peaks[i].push(m.peakRssMB); });
  const wavMedian = spread(times[0]).median;
  shapes.forEach((s, i) => {
    const t = spread(times[i]);
    say(`  ${s.label.padEnd(44)} ${t.text.padEnd(34)} ${(t.median / wavMedian).toFixed(2)}× WAV's time, peak RSS ${Math.max(...peaks[i]).toFixed(0)} MB`);
  });
}
