// A raw file whose bytes make a duration off its group's duration_s: the sign of a wrong layout, a failure in check and reduce.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { fittingLayouts, rawDurationProblem } from '../pipeline/reduce/raw-duration.js';
import { quern, readJson, tempDir } from './helpers.js';

/** Two interleaved big-endian int16 channels, `seconds` at 500 Hz, after a 32-byte header: 32 + 500·s·2·2 bytes. */
function twoChannelFile(seconds: number): Buffer {
  const frames = Math.round(500 * seconds);
  const b = Buffer.alloc(32 + frames * 4, 0x48);
  for (let i = 0; i < frames; i++) {
    b.writeInt16BE(Math.round(3276 * Math.sin(2 * Math.PI * 2 * i / 500)), 32 + 4 * i);
    b.writeInt16BE(Math.round(1638 * Math.sin(2 * Math.PI * 7 * i / 500)), 32 + 4 * i + 2);
  }
  return b;
}

function rawArchive(channels: number, files: Record<string, number>): string {
  const dir = join(tempDir(), 'arc');
  mkdirSync(join(dir, 'strain'), { recursive: true });
  for (const [name, seconds] of Object.entries(files)) writeFileSync(join(dir, 'strain', name), twoChannelFile(seconds));
  writeFileSync(join(dir, 'archive.yaml'), `groups:\n  - name: strain\n    match: "strain/*.bin"\n    format: raw\n    sample_rate: 500\n    duration_s: 4\n    layout: { sample_type: int16, byte_order: big, channels: ${channels}, header_bytes: 32 }\n`);
  writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\n');
  return dir;
}

describe('a raw file against its declared duration', () => {
  it('fails in check and in reduce when a wrong channel count makes the bytes read twice as long, naming both durations, what to check and the layout that fits', () => {
    // 8000 payload bytes as one int16 channel: 4000 frames, 8 s at 500 Hz (by hand), twice the declared 4 s.
    const archive = rawArchive(1, { 's1.bin': 4 });
    const problem = /raw layout: the file reads as 8\.000 s \(4000 frames of 1 int16 channel after a 32-byte header, at 500 Hz\) but group "strain" declares duration_s: 4; a wrong layout still reads as plausible channels, so check the group's layout\.channels, layout\.sample_type and layout\.header_bytes against the logger's \(the same bytes would last 4 s with channels: 2, or sample_type: int32, or sample_type: float32\), or, if this group's captures vary in length, leave duration_s out/;
    const check = quern('check', archive);
    expect(check.code).toBe(1);
    expect(check.stdout).toMatch(new RegExp(`^FAILED  strain/s1\\.bin  \\[strain\\]  ${problem.source}`, 'm'));
    const out = join(archive, '..', 'out');
    const run = quern('reduce', archive, '--out', out, '--log', 'plain', '--jobs', '1');
    expect(run.code).toBe(1);
    expect(run.stdout).toMatch(/strain\/s1\.bin/);
    const line = readJson(join(out, 'run.json')).recordings.find((r: { recording: string }) => r.recording === 'strain/s1.bin');
    expect(line.status).toBe('failed');
    expect(line.reason).toMatch(problem);
  });

  it('takes the right layout, and a capture within 1 % of the declared duration', () => {
    // 3.98 s is 0.5 % short of 4 s: within the declaration flag's default 1 % tolerance.
    const archive = rawArchive(2, { 's1.bin': 4, 's2.bin': 3.98 });
    const check = quern('check', archive);
    expect(check.code, check.stdout).toBe(0);
    expect(check.stdout).toMatch(/^ok +strain\/s1\.bin .* 4\.000 s/m);
    expect(check.stdout).toMatch(/^ok +strain\/s2\.bin .* 3\.980 s/m);
  });

  it('suggests only layouts whose frames last the declared duration', () => {
    const layout = { sample_type: 'int16' as const, byte_order: 'little' as const, channels: 3, header_bytes: 0 };
    // 6 s of 3 int16 channels at 1 kHz is 36,000 bytes: 1 channel lasts 18 s, 6 channels 3 s, float64 ×3 1.5 s (by hand).
    expect(fittingLayouts(36_000, layout, 1000, 3, 0.01)).toEqual(['channels: 6', 'sample_type: int32', 'sample_type: float32']);
    expect(fittingLayouts(36_000, layout, 1000, 18, 0.01)).toEqual(['channels: 1']);
    expect(rawDurationProblem(6000, 1000, layout, 6, 0.01, 'g')).toBeNull();
    expect(rawDurationProblem(6000, 1000, layout, null, 0.01, 'g')).toBeNull();
    expect(rawDurationProblem(6000, 1000, layout, 5.5, 0.01, 'g')).toMatch(/reads as 6\.000 s .* declares duration_s: 5\.5; .*against the logger's, or, if/);
  });
});
