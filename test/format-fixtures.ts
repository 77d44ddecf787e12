// The format fixtures (test/fixtures/formats/, made by make-format-fixtures.py) and the samples their independent decoders gave.
import { closeSync, ftruncateSync, openSync, readFileSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { fixture, readJson, tempDir } from './helpers.js';

export interface FormatFixture { file: string; made_by: string; decoded_by: string; rate: number; channels: number; frames: number; bits?: number; start_time?: string; channel_names?: string[]; linear16?: number[] }

export const manifest = readJson(fixture('formats', 'expected.json'));
export const formatFixtures: FormatFixture[] = manifest.files;
export const formatFixture = (file: string) => formatFixtures.find((f) => f.file === file)!;

/** The independent decoder's samples, per channel, as float64 (normalised as quern normalises). */
export function expectedSamples(f: FormatFixture): Float64Array[] {
  const b = readFileSync(fixture('formats', `${f.file}.f64`));
  const all = new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  return Array.from({ length: f.channels }, (_, c) => Float64Array.from({ length: f.frames }, (_, i) => all[i * f.channels + c]));
}

/** The RF64 file past 4 GiB as a sparse file: the header and last samples Python wrote, a hole between. Returns its path. */
export function sparseRf64(): string {
  const big = manifest.rf64_big;
  const path = join(tempDir(), 'big.wav');
  const head = readFileSync(fixture('formats', 'rf64-big.head')), tail = readFileSync(fixture('formats', 'rf64-big.tail'));
  const fd = openSync(path, 'w');
  writeSync(fd, head, 0, head.length, 0);
  ftruncateSync(fd, big.data_offset + big.data_bytes);
  writeSync(fd, tail, 0, tail.length, big.data_offset + big.data_bytes - tail.length);
  closeSync(fd);
  return path;
}
