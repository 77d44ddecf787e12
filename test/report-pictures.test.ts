// The report's pictures for many channels to check: drawn in parts by the worker threads and written out as they come,
// each section must carry its own channel's pictures. The reference is the pictures drawn straight from each stored
// entry's data with the charting code alone (one shape at a time, on this thread).
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { evidenceCharts } from '../pipeline/outputs/charts.js';
import { storedEntries } from '../pipeline/plan/cache.js';
import { encodeWav } from '../scripts/wav-file.js';
import { unpackEvidence, type PackedEvidence } from '../stages/quality/evidence.js';
import { quern, tempDir } from './helpers.js';

// Invented: a misranged rig whose four accelerometers clip every night, each at its own tone.
const RECORDINGS = 13, FS = 8000, FRAMES = 2000;
function clippedArchive(): string {
  const archive = join(tempDir(), 'archive');
  mkdirSync(archive);
  for (let r = 0; r < RECORDINGS; r++) {
    const channels = Array.from({ length: 4 }, (_, c) => Float64Array.from({ length: FRAMES }, (_, i) => Math.max(-1, Math.min(1, 1.3 * Math.sin((2 * Math.PI * (100 + 37 * r + 11 * c) * i) / FS)))));
    writeFileSync(join(archive, `night-${String(r).padStart(2, '0')}.wav`), encodeWav({ sampleRate: FS, channels, encoding: 'pcm16' }));
  }
  const channels = [1, 2, 3, 4].map((c) => `      - { name: acc${c}, quantity: acceleration, unit: m/s^2, scale: ${10 * c} }`).join('\n');
  writeFileSync(join(archive, 'archive.yaml'), `groups:\n  - name: rig\n    match: "*.wav"\n    channels:\n${channels}\n`);
  return archive;
}

describe('the report\'s pictures for many channels to check', () => {
  it('puts each channel\'s own pictures in its section, across the parts the threads draw', async () => {
    const archive = clippedArchive(), out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--jobs', '2', '--quiet').code).toBe(0);
    const html = readFileSync(join(out, 'quality.html'), 'utf8');
    const sections = [...html.matchAll(/<section class="channel" [^>]*data-recording="([^"]+)" data-channel="([^"]+)"[^>]*>([\s\S]*?)<\/section>/g)]
      .map(([, recording, channel, body]) => ({ at: `${recording} ${channel}`, charts: /<div class="charts">([\s\S]*)<\/div>\n$/.exec(body)?.[1] ?? null }));
    expect(sections.length).toBe(RECORDINGS * 4); // every channel clips: more than one part of pictures
    const expected = new Map<string, string>();
    for await (const e of storedEntries(out)) {
      for (const [c, ev] of (e.groups.quality?.evidence ?? []).entries()) {
        if (ev) expected.set(`${e.recording} ${e.base!.channels[c].name}`, (await evidenceCharts(unpackEvidence((ev as { data: PackedEvidence }).data), e.base!.channels[c].unit)).join(''));
      }
    }
    expect(expected.size).toBe(RECORDINGS * 4);
    for (const s of sections) expect(s.charts, s.at).toBe(expected.get(s.at));
    // Different channels' pictures differ, so a picture in the wrong section would show.
    expect(new Set(sections.map((s) => s.charts)).size).toBe(sections.length);
  });
});
