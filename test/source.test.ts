// A recording's bytes: a small file read whole when opened and a larger one read through its handle give the same
// positioned reads as Node's own whole-file read (fs.readFileSync), past the end included.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { openSource } from '../stages/read/source.js';
import { fixture } from './helpers.js';

async function readsAsFs(path: string, wholeUpTo: number): Promise<void> {
  const expected = readFileSync(path);
  const source = await openSource(path, { wholeUpTo });
  try {
    expect(source.size).toBe(expected.length);
    for (const [at, length] of [[0, 44], [7, 1000], [expected.length - 10, 64], [expected.length + 5, 8]]) {
      const b = Buffer.alloc(length);
      const { bytesRead } = await source.read(b, 0, length, at);
      const want = expected.subarray(Math.max(0, at), Math.max(0, Math.min(expected.length, at + length)));
      expect(bytesRead).toBe(want.length);
      expect(b.subarray(0, bytesRead).equals(want)).toBe(true);
    }
  } finally {
    await source.close();
  }
}

describe('a recording file as bytes', () => {
  it('gives the same positioned reads whether the file is read whole or through its handle', async () => {
    const path = fixture('wav', 'pcm24-3ch.wav');
    await readsAsFs(path, 1 << 20); // read whole
    await readsAsFs(path, 16); // through the handle
  });
});
