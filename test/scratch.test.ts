// Working buffers lent to a recording's stages and taken back at its end: a later recording reuses them, zeroed, and
// reduces to exactly what it gives with new buffers (a buffer still in use after its recording would show here).
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadSpec } from '../pipeline/declare/declare.js';
import { computeRecording } from '../pipeline/reduce/compute.js';
import type { RecordingJob } from '../pipeline/plan/plan.js';
import { encodeWav } from '../scripts/wav-file.js';
import type { ChannelDeclaration } from '../spec/archive.js';
import { ScratchBuffers } from '../stages/scratch.js';
import { tempDir } from './helpers.js';

/** Counts the buffers it lends that were given back before, and how many it makes new. */
class CountingBuffers extends ScratchBuffers {
  reused = 0;
  made = 0;
  private readonly back = new Set<Float64Array>();
  override take(length: number): Float64Array {
    const b = super.take(length);
    if (this.back.has(b)) this.reused++; else this.made++;
    return b;
  }
  override give(buffers: Iterable<Float64Array>): void {
    const list = [...buffers];
    for (const b of list) this.back.add(b);
    super.give(list);
  }
}

describe('ScratchBuffers', () => {
  it('lends a buffer given back, zeroed, and keeps no more than its limit', () => {
    const s = new ScratchBuffers(8 * 100);
    const a = s.take(100);
    a.fill(7);
    s.give([a]);
    const b = s.take(100);
    expect(b).toBe(a);
    expect(b.every((v) => v === 0)).toBe(true);
    expect(s.take(100)).not.toBe(a);
    s.give([new Float64Array(100), new Float64Array(100)]);
    const c = s.take(100), d = s.take(100);
    expect(c).not.toBe(d);
    expect(d.length).toBe(100); // the second one given back was over the limit: a new buffer
  });

  it('a recording reduced with borrowed buffers gives the same figures as with new ones, envelope and running windows included', async () => {
    const dir = tempDir(), fs = 12_800, n = 3 * fs;
    // Two accelerometer channels of an invented test rig: a gear mesh at 3.2 kHz modulated at 37 Hz, and a 120 Hz hum.
    const a = Float64Array.from({ length: n }, (_, i) => 0.4 * (1 + 0.5 * Math.sin((2 * Math.PI * 37 * i) / fs)) * Math.sin((2 * Math.PI * 3200 * i) / fs));
    const b = Float64Array.from({ length: n }, (_, i) => 0.3 * Math.sin((2 * Math.PI * 120 * i) / fs) + 0.01 * Math.sin(i));
    writeFileSync(join(dir, 'rig.wav'), encodeWav({ sampleRate: fs, channels: [a, b], encoding: 'pcm16' }));
    const decl = (name: string): ChannelDeclaration => ({ name, quantity: 'acceleration', unit: 'g', scale: 1, offset: 0, range: [-1, 1], bits: 16, max_frequency_hz: null });
    const { spec } = await loadSpec(dir);
    const job: RecordingJob = { recording: 'rig.wav', path: join(dir, 'rig.wav'), group: 'rig', format: null, sampleRate: null, layout: null, channels: [decl('a1'), decl('a2')], labels: {}, durationS: null, spec, chunkFrames: 4096 };
    const fresh = await computeRecording(job, { buffers: new ScratchBuffers(0) });
    const lent = new CountingBuffers();
    const first = await computeRecording(job, { buffers: lent });
    const again = await computeRecording(job, { buffers: lent });
    expect(fresh.status).toBe('reduced');
    expect(lent.made).toBeGreaterThan(0);
    expect(lent.reused).toBe(lent.made); // the second recording borrowed back every buffer the first made, and made none
    const figures = (o: typeof fresh) => JSON.stringify({ groups: o.groups, base: o.base });
    expect(figures(first)).toBe(figures(fresh));
    expect(figures(again)).toBe(figures(fresh));
    expect(Object.keys(fresh.groups)).toEqual(expect.arrayContaining(['envelope']));
  });
});
