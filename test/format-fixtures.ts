// The format fixtures (test/fixtures/formats/, made by make-format-fixtures.py) and the samples their independent decoders gave.
import { readFileSync } from 'node:fs';
import { fixture, readJson } from './helpers.js';

export interface FormatFixture { file: string; made_by: string; decoded_by: string; rate: number; channels: number; frames: number; bits?: number; start_time?: string; linear16?: number[] }

export const manifest = readJson(fixture('formats', 'expected.json'));
export const formatFixtures: FormatFixture[] = manifest.files;
export const formatFixture = (file: string) => formatFixtures.find((f) => f.file === file)!;

/** The independent decoder's samples, per channel, as float64 (normalised as quern normalises). */
export function expectedSamples(f: FormatFixture): Float64Array[] {
  const b = readFileSync(fixture('formats', `${f.file}.f64`));
  const all = new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  return Array.from({ length: f.channels }, (_, c) => Float64Array.from({ length: f.frames }, (_, i) => all[i * f.channels + c]));
}
