// Writes a bench recording as a level 5 MAT-file (MathWorks, "MAT-File Format"): one int16 variable, samples × channels
// (MATLAB's usual layout) or channels × samples, compressed as MATLAB's default -v7 or stored as -v6, and the rate.
import { readFileSync, writeFileSync } from 'node:fs';
import { deflateSync } from 'node:zlib';

const element = (type: number, data: Buffer) => {
  const tag = Buffer.alloc(8);
  tag.writeUInt32LE(type, 0);
  tag.writeUInt32LE(data.length, 4);
  return Buffer.concat([tag, data, Buffer.alloc((8 - (data.length % 8)) % 8)]);
};
const int32s = (...v: number[]) => { const b = Buffer.alloc(4 * v.length); v.forEach((x, i) => b.writeInt32LE(x, 4 * i)); return b; };

/** A 2-D array (miMATRIX) of class `cls` whose values are stored as data type `type`, column by column. */
function array(name: string, cls: number, type: number, dims: [number, number], values: Buffer): Buffer {
  return element(14, Buffer.concat([element(6, Buffer.from([cls, 0, 0, 0, 0, 0, 0, 0])), element(5, int32s(...dims)), element(1, Buffer.from(name, 'latin1')), element(type, values)]));
}

/** The samples of a 16-bit PCM WAV written by writeLongWav (a 44-byte header), as a MAT-file's `data` and `fs`. */
export function wavAsMat(wav: string, path: string, { channels, sampleRate, compress, rowsAreChannels = false }: { channels: number; sampleRate: number; compress: boolean; rowsAreChannels?: boolean }): void {
  const pcm = readFileSync(wav).subarray(44);
  const frames = pcm.length / (2 * channels);
  // MATLAB stores column by column: channels × samples keeps the WAV's interleaving, samples × channels puts each channel together.
  let values = pcm;
  if (!rowsAreChannels) {
    values = Buffer.alloc(pcm.length);
    for (let c = 0; c < channels; c++) for (let i = 0; i < frames; i++) values.writeInt16LE(pcm.readInt16LE(2 * (i * channels + c)), 2 * (c * frames + i));
  }
  const data = array('data', 10, 3, rowsAreChannels ? [channels, frames] : [frames, channels], values);
  const fs = Buffer.alloc(8);
  fs.writeDoubleLE(sampleRate);
  const rate = array('fs', 6, 9, [1, 1], fs);
  const header = Buffer.concat([Buffer.from('MATLAB 5.0 MAT-file, quern bench'.padEnd(116, ' '), 'latin1'), Buffer.alloc(8), Buffer.from([0, 1]), Buffer.from('IM', 'latin1')]);
  // A compressed element is the zlib stream of the whole array element, not padded (as MATLAB writes it).
  const stored = (el: Buffer) => {
    if (!compress) return el;
    const z = deflateSync(el), tag = Buffer.alloc(8);
    tag.writeUInt32LE(15, 0);
    tag.writeUInt32LE(z.length, 4);
    return Buffer.concat([tag, z]);
  };
  writeFileSync(path, Buffer.concat([header, stored(data), stored(rate)]));
}
