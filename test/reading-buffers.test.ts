// The readers' reused buffers: files read one after another, or several at once, through buffers other files left
// dirty still decode exactly as independent tools decoded them (sox, ffmpeg, libsndfile, flac, numpy: test/fixtures/make-format-fixtures.py).
import { describe, expect, it } from 'vitest';
import { openRecording } from '../stages/read/open.js';
import { ReadingBuffers, THREAD_READING_BUFFERS } from '../stages/read/reading-buffers.js';
import { expectedSamples, formatFixtures } from './format-fixtures.js';
import { fixture } from './helpers.js';

// WAV and FLAC: the readers that take their buffers from the thread's reading buffers.
const wavs = formatFixtures.filter((f) => f.file.endsWith('.wav') || f.file.endsWith('.flac'));

/** Steps several recordings' chunk streams in turn, one chunk each, gathering every channel's samples. */
async function readInTurn(files: string[], chunkFrames: number): Promise<number[][][]> {
  const recs = await Promise.all(files.map((f) => openRecording(fixture('formats', f), { chunkFrames })));
  const streams = recs.map((r) => r.chunks());
  const got = recs.map((r) => Array.from({ length: r.channelCount }, () => [] as number[]));
  const open = new Set(streams.keys());
  while (open.size) {
    for (const i of [...open]) {
      const next = await streams[i].next();
      if (next.done) { open.delete(i); continue; }
      next.value.forEach((ch, c) => got[i][c].push(...ch));
    }
  }
  await Promise.all(recs.map((r) => r.close()));
  return got;
}

describe('reading buffers reused from one recording to the next', () => {
  it('decodes every WAV and FLAC fixture exactly, read in turn with others through shared, already used buffers', async () => {
    // Dirty the thread's buffers first: whatever a buffer held before must never show through.
    const dirty = THREAD_READING_BUFFERS.takeSamples(4, 70_000);
    for (const d of dirty) d.fill(Number.NaN);
    const bytes = THREAD_READING_BUFFERS.takeBytes(300_000).fill(0xa5);
    THREAD_READING_BUFFERS.give(bytes, dirty);
    // Small chunks, so most files take several, and three files at a time in every order.
    for (const chunkFrames of [97, 4096]) {
      for (let k = 0; k < wavs.length; k += 3) {
        const group = [wavs[k], wavs[(k + 1) % wavs.length], wavs[(k + 2) % wavs.length]];
        const got = await readInTurn(group.map((f) => f.file), chunkFrames);
        group.forEach((f, i) => {
          const want = expectedSamples(f);
          for (let c = 0; c < f.channels; c++) expect(Float64Array.from(got[i][c]), `${f.file} channel ${c}, chunks of ${chunkFrames}`).toEqual(want[c]);
        });
      }
    }
  });

  it('gives a recording read after another the same memory, and two read at once different memory', () => {
    const pool = new ReadingBuffers();
    const a = pool.takeSamples(2, 1000), ab = pool.takeBytes(4000);
    const b = pool.takeSamples(2, 1000), bb = pool.takeBytes(4000);
    expect(new Set([...a, ...b].map((x) => x.buffer)).size).toBe(4);
    expect(ab.buffer).not.toBe(bb.buffer);
    pool.give(ab, a);
    const again = pool.takeSamples(2, 800), againBytes = pool.takeBytes(3000);
    expect(again.map((x) => x.length)).toEqual([800, 800]);
    expect(new Set(again.map((x) => x.buffer))).toEqual(new Set(a.map((x) => x.buffer)));
    expect(againBytes.buffer).toBe(ab.buffer);
    expect(againBytes.length).toBe(3000);
    // A view given back returns its whole array: the next, longer request fits in it again.
    pool.give(againBytes, again);
    expect(pool.takeSamples(1, 1000)[0].buffer).toBe(a[0].buffer);
  });

  it('keeps a bounded number of free buffers, whatever it is given', () => {
    const pool = new ReadingBuffers();
    const taken = Array.from({ length: 200 }, (_, i) => pool.takeSamples(1, 10 + i)[0]);
    pool.give(pool.takeBytes(1), taken);
    const kept = new Set<ArrayBufferLike>();
    for (let i = 0; i < 200; i++) {
      const x = pool.takeSamples(1, 1)[0];
      if (taken.some((t) => t.buffer === x.buffer)) kept.add(x.buffer);
    }
    expect(kept.size).toBeGreaterThan(0);
    expect(kept.size).toBeLessThanOrEqual(64);
  });
});
