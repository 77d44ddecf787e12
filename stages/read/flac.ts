// FLAC reader (RFC 9639): STREAMINFO and Vorbis comment up front, then frames decoded one at a time from a bounded window
// of the file, each checked by its CRCs, and the whole stream by STREAMINFO's MD5 signature of the samples.
import { createHash } from 'node:crypto';
import { decodeFrame, FrameError, maxFrameBytes, type StreamParams } from './flac-frame.js';
import { boundedChunkFrames, checkChannelCount, DEFAULT_CHUNK_FRAMES, RecordingError, type Recording } from './recording.js';
import { openSource } from './source.js';
import { THREAD_READING_BUFFERS } from './reading-buffers.js';
import { isoTimeMs, startAt } from './iso-time.js';


/** How a group's FLAC files are read: the Vorbis comment tag holding the start time, when one is declared. */
export interface FlacOptions { start_time_tag: string | null }

interface StreamInfo extends StreamParams { minBlockSize: number; totalSamples: number; md5: string }

const AGAIN = 'the file is damaged (a bad copy or an interrupted write): copy it again or re-encode it from the original';

// STREAMINFO (RFC 9639 §8.2): block sizes, frame sizes, sample rate (20 bits), channels − 1 (3), bits − 1 (5), total samples (36), MD5.
function parseStreamInfo(b: Buffer, at: number): StreamInfo {
  if (b.length < 34) throw new RecordingError(`byte ${at}: STREAMINFO is ${b.length} bytes, shorter than 34; ${AGAIN}`);
  const minBlockSize = b.readUInt16BE(0), maxBlockSize = b.readUInt16BE(2);
  const sampleRate = (b.readUInt32BE(10) >>> 12);
  const channels = ((b[12] >> 1) & 7) + 1;
  const bitsPerSample = (((b[12] & 1) << 4) | (b[13] >> 4)) + 1;
  const totalSamples = (b[13] & 15) * 2 ** 32 + b.readUInt32BE(14);
  const md5 = b.toString('hex', 18, 34);
  if (maxBlockSize < 16 || minBlockSize > maxBlockSize) throw new RecordingError(`byte ${at}: STREAMINFO block sizes ${minBlockSize}–${maxBlockSize} are invalid; ${AGAIN}`);
  if (sampleRate === 0) throw new RecordingError(`byte ${at}: STREAMINFO sample rate is 0; ${AGAIN}`);
  if (bitsPerSample < 4) throw new RecordingError(`byte ${at}: STREAMINFO says ${bitsPerSample} bits per sample (4 to 32 are valid); ${AGAIN}`);
  checkChannelCount(channels, `byte ${at}: STREAMINFO`);
  return { minBlockSize, maxBlockSize, sampleRate, channels, bitsPerSample, totalSamples, md5 };
}

// Vorbis comment (RFC 9639 §8.6): little-endian lengths; a vendor string, then NAME=value fields.
function parseVorbisComment(b: Buffer): Map<string, string> {
  const tags = new Map<string, string>();
  let p = 0;
  const length = () => { if (p + 4 > b.length) return -1; const n = b.readUInt32LE(p); p += 4; return p + n <= b.length ? n : -1; };
  const vendor = length();
  if (vendor < 0) return tags;
  p += vendor;
  const count = length() < 0 ? 0 : b.readUInt32LE(p - 4);
  for (let i = 0; i < count; i++) {
    const n = length();
    if (n < 0) break;
    const field = b.toString('utf8', p, p + n);
    p += n;
    const eq = field.indexOf('=');
    if (eq > 0 && !tags.has(field.slice(0, eq).toUpperCase())) tags.set(field.slice(0, eq).toUpperCase(), field.slice(eq + 1));
  }
  return tags;
}

/** The start time a declared tag holds: an ISO 8601 date-time (UTC unless it says otherwise). */
function tagStartTime(tags: Map<string, string>, tag: string): Date {
  const text = tags.get(tag.toUpperCase());
  if (text == null) throw new RecordingError(`Vorbis comment: no ${tag} tag, which the group declares holds the start time; tag the file (metaflac --set-tag=${tag}=…) or drop flac.start_time_tag`);
  const t = isoTimeMs(text);
  if (!Number.isFinite(t)) throw new RecordingError(`Vorbis comment: tag ${tag} holds "${text.slice(0, 60)}", not an ISO 8601 date-time; correct the tag`);
  return startAt(t);
}

export async function openFlac(path: string, { chunkFrames = DEFAULT_CHUNK_FRAMES, options = null as FlacOptions | null } = {}): Promise<Recording> {
  const file = await openSource(path);
  try {
    const size = file.size;
    const readAt = async (at: number, length: number) => {
      const b = Buffer.alloc(Math.max(0, Math.min(length, size - at)));
      await file.read(b, 0, b.length, at);
      return b;
    };
    let pos = 0;
    let head = await readAt(0, 10);
    // An ID3v2 tag some taggers put before the stream: 10 bytes, then a syncsafe (7 bits a byte) size.
    if (head.length === 10 && head.toString('latin1', 0, 3) === 'ID3') {
      pos = 10 + ((head[6] & 0x7f) << 21 | (head[7] & 0x7f) << 14 | (head[8] & 0x7f) << 7 | (head[9] & 0x7f)) + (head[5] & 0x10 ? 10 : 0);
      head = await readAt(pos, 4);
    }
    if (head.length < 4 || head.toString('latin1', 0, 4) !== 'fLaC') {
      throw new RecordingError(`byte ${pos}: not a FLAC stream (no "fLaC" marker); check the group's format or the file`);
    }
    pos += 4;
    let info: StreamInfo | null = null;
    let tags = new Map<string, string>();
    // Metadata blocks (RFC 9639 §8.1): last-block flag, 7-bit type, 24-bit length; STREAMINFO must come first.
    for (let last = false; !last;) {
      const h = await readAt(pos, 4);
      if (h.length < 4) throw new RecordingError(`byte ${size}: the file ends inside the metadata; ${AGAIN}`);
      last = (h[0] & 0x80) !== 0;
      const type = h[0] & 0x7f, length = h.readUIntBE(1, 3);
      if (pos + 4 + length > size) throw new RecordingError(`byte ${pos}: metadata block of ${length} bytes runs past the end of the file (${size} bytes); ${AGAIN}`);
      if (!info && type !== 0) throw new RecordingError(`byte ${pos}: the first metadata block is type ${type}, not STREAMINFO; ${AGAIN}`);
      if (type === 127) throw new RecordingError(`byte ${pos}: invalid metadata block type 127; ${AGAIN}`);
      if (type === 0) info = parseStreamInfo(await readAt(pos + 4, Math.min(length, 34)), pos + 4);
      else if (type === 4 && options?.start_time_tag) tags = parseVorbisComment(await readAt(pos + 4, Math.min(length, 1 << 20)));
      pos += 4 + length;
    }
    const si = info!;
    const startTime = options?.start_time_tag ? tagStartTime(tags, options.start_time_tag) : null;
    const audioStart = pos;
    const frames = si.totalSamples > 0 ? si.totalSamples : null;
    // A short file needs arrays for its own samples only.
    const chunk = Math.max(1, Math.min(boundedChunkFrames(chunkFrames, si.channels), frames ?? Infinity));
    const notes: string[] = [];

    async function* chunks(): AsyncGenerator<Float64Array[]> {
      // A window of the file at least two of the largest possible frames long; frames are decoded where they lie in it.
      const need = maxFrameBytes(si.channels, si.maxBlockSize);
      // The window and the sample arrays come from the thread's reading buffers and go back once the file is read.
      const buffers = THREAD_READING_BUFFERS;
      const window = buffers.takeBytes(Math.min(Math.max(2 * need, 1 << 20), Math.max(size - audioStart, 1)));
      const block = buffers.takeSamples(si.channels, si.maxBlockSize);
      const out = buffers.takeSamples(si.channels, chunk);
      try {
        yield* decodeFrames(window, block, out);
      } finally {
        buffers.give(window, block);
        buffers.give(null, out);
      }
    }

    /** Decodes the frames through the file `window`, a frame's samples into `block`, and yields them in chunks gathered in `out`. */
    async function* decodeFrames(window: Buffer, block: Float64Array[], out: Float64Array[]): AsyncGenerator<Float64Array[]> {
      const need = maxFrameBytes(si.channels, si.maxBlockSize);
      let start = 0, end = 0, fileAt = audioStart;
      const fill = async () => {
        window.copyWithin(0, start, end);
        end -= start; start = 0;
        while (end < window.length && fileAt < size) {
          const { bytesRead } = await file.read(window, end, window.length - end, fileAt);
          if (bytesRead === 0) break;
          end += bytesRead; fileAt += bytesRead;
        }
      };
      const md5 = createHash('md5');
      const bytesPerSample = Math.ceil(si.bitsPerSample / 8);
      let md5Bytes = Buffer.alloc(0);
      const full = 2 ** (si.bitsPerSample - 1);
      let k = 0, decoded = 0, frameNo = 0;
      for (;;) {
        if (frames != null && decoded >= frames) break;
        if (end - start < need && fileAt < size) await fill();
        if (start >= end) break;
        const byteAt = fileAt - (end - start);
        let f;
        try {
          f = decodeFrame(window, start, end, si, block);
        } catch (e) {
          if (!(e instanceof FrameError)) throw e;
          const cut = e.cut && fileAt >= size;
          throw new RecordingError(`frame ${frameNo} at byte ${byteAt}: ${cut ? 'the file ends inside this frame' : e.message}; ${frames != null ? `${decoded} of ${frames} samples were decoded before it; ` : ''}${AGAIN}`);
        }
        start += f.bytes;
        frameNo++;
        const n = frames != null ? Math.min(f.blockSize, frames - decoded) : f.blockSize;
        // The MD5 signature covers the samples as little-endian signed integers of whole bytes, interleaved.
        if (si.md5 !== '0'.repeat(32)) {
          const len = n * si.channels * bytesPerSample;
          if (md5Bytes.length < len) md5Bytes = Buffer.alloc(len);
          let o = 0;
          for (let i = 0; i < n; i++) for (let c = 0; c < si.channels; c++) {
            const x = block[c][i] | 0; // samples of up to 32 bits; a byte array keeps the low 8 bits of what it is given
            md5Bytes[o++] = x;
            if (bytesPerSample > 1) md5Bytes[o++] = x >> 8;
            if (bytesPerSample > 2) md5Bytes[o++] = x >> 16;
            if (bytesPerSample > 3) md5Bytes[o++] = x >> 24;
          }
          md5.update(md5Bytes.subarray(0, len));
        }
        for (let i = 0; i < n;) {
          const take = Math.min(n - i, chunk - k);
          for (let c = 0; c < si.channels; c++) {
            const src = block[c], dst = out[c];
            for (let j = 0; j < take; j++) dst[k + j] = src[i + j] / full;
          }
          i += take; k += take;
          if (k === chunk) { yield out; k = 0; }
        }
        decoded += n;
      }
      if (k > 0) yield out.map((a) => a.subarray(0, k));
      if (frames != null && decoded < frames) {
        throw new RecordingError(`byte ${size}: the file ends after ${decoded} of the ${frames} samples STREAMINFO declares; the file was cut short: copy it again or re-encode it`);
      }
      if (si.md5 !== '0'.repeat(32) && md5.digest('hex') !== si.md5) {
        throw new RecordingError(`the decoded samples do not match STREAMINFO's MD5 signature although every frame's CRC did; ${AGAIN}`);
      }
      if (start < end || fileAt < size) notes.push(`${size - fileAt + (end - start)} bytes after the last frame were ignored`);
    }
    return {
      format: 'flac', channelCount: si.channels, sampleRate: si.sampleRate, frames,
      encoding: `flac${si.bitsPerSample}`, bits: si.bitsPerSample, normalised: true,
      startTime, channelNames: null, notes, chunks, close: () => file.close(),
    };
  } catch (e) {
    await file.close();
    throw e;
  }
}
