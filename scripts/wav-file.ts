// A small WAV writer for generated archives: 16- or 24-bit PCM or 32-bit float, with an optional Broadcast Wave bext chunk.

export interface WavSpec {
  sampleRate: number;
  /** One array per channel, values in ±1 of full scale. */
  channels: Float64Array[];
  encoding?: 'pcm16' | 'pcm24' | 'float32';
  /** Origination date-time written into a bext chunk (EBU Tech 3285), as UTC. */
  origination?: Date;
}

function chunk(id: string, body: Buffer): Buffer {
  const head = Buffer.alloc(8);
  head.write(id, 0, 'latin1');
  head.writeUInt32LE(body.length, 4);
  return Buffer.concat([head, body, body.length & 1 ? Buffer.alloc(1) : Buffer.alloc(0)]);
}

export function encodeWav({ sampleRate, channels, encoding = 'pcm16', origination }: WavSpec): Buffer {
  const nc = channels.length, frames = channels[0].length;
  const width = encoding === 'pcm16' ? 2 : encoding === 'pcm24' ? 3 : 4;
  const fmt = Buffer.alloc(16);
  fmt.writeUInt16LE(encoding === 'float32' ? 3 : 1, 0);
  fmt.writeUInt16LE(nc, 2);
  fmt.writeUInt32LE(sampleRate, 4);
  fmt.writeUInt32LE(sampleRate * nc * width, 8);
  fmt.writeUInt16LE(nc * width, 12);
  fmt.writeUInt16LE(width * 8, 14);
  const data = Buffer.alloc(frames * nc * width);
  for (let i = 0, at = 0; i < frames; i++) {
    for (let c = 0; c < nc; c++, at += width) {
      const v = channels[c][i];
      if (encoding === 'pcm16') data.writeInt16LE(Math.max(-32768, Math.min(32767, Math.round(v * 32768))), at);
      else if (encoding === 'pcm24') data.writeIntLE(Math.max(-8388608, Math.min(8388607, Math.round(v * 8388608))), at, 3);
      else data.writeFloatLE(v, at);
    }
  }
  const parts = [chunk('fmt ', fmt)];
  if (origination) {
    const bext = Buffer.alloc(602);
    bext.write('generated demo capture', 0, 'latin1');
    const iso = origination.toISOString();
    bext.write(iso.slice(0, 10), 320, 'latin1');
    bext.write(iso.slice(11, 19), 330, 'latin1');
    parts.push(chunk('bext', bext));
  }
  parts.push(chunk('data', data));
  const body = Buffer.concat([Buffer.from('WAVE', 'latin1'), ...parts]);
  const riff = Buffer.alloc(8);
  riff.write('RIFF', 0, 'latin1');
  riff.writeUInt32LE(body.length, 4);
  return Buffer.concat([riff, body]);
}
