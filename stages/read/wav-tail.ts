// What follows a WAV file's data chunk: chunks (LIST, id3, cue…) and appended ID3 tags are normal there; other bytes
// may be samples the data chunk's size leaves out, so their count becomes a note.

type BytesAt = (at: number, length: number) => Promise<Buffer>;

/** Most chunks walked after the data; a tail with more is counted as unaccounted from there (our choice). */
const MAX_TAIL_CHUNKS = 4096;

const isChunkId = (b: Buffer) => b.length >= 4 && [0, 1, 2, 3].every((i) => b[i] >= 0x20 && b[i] <= 0x7e);

/** Length of an ID3v2 tag at the start of `b` (ID3v2.4 §3.1: 10-byte header, syncsafe size, optional 10-byte footer; from memory), or 0. */
function id3v2Length(b: Buffer): number {
  if (b.length < 10 || b.toString('latin1', 0, 3) !== 'ID3' || [6, 7, 8, 9].some((i) => b[i] & 0x80)) return 0;
  const size = (b[6] << 21) | (b[7] << 14) | (b[8] << 7) | b[9];
  return 10 + size + (b[5] & 0x10 ? 10 : 0);
}

/** Bytes from `from` to the end of the file that no chunk, padding byte or ID3 tag accounts for. */
export async function unaccountedTail(bytesAt: BytesAt, from: number, size: number, little: boolean): Promise<number> {
  let pos = from;
  for (let n = 0; n < MAX_TAIL_CHUNKS && pos < size; n++) {
    const head = await bytesAt(pos, 10);
    // ID3v1 (128 bytes from "TAG") closes a file; ID3v2 may be appended raw rather than in an "id3 " chunk.
    if (size - pos === 128 && head.toString('latin1', 0, 3) === 'TAG') return 0;
    const tag = id3v2Length(head);
    if (tag > 0 && pos + tag <= size) { pos += tag; continue; }
    if (head.length < 8 || !isChunkId(head)) break;
    const len = little ? head.readUInt32LE(4) : head.readUInt32BE(4);
    if (pos + 8 + len > size) break;
    // A last chunk of odd length may lack its padding byte.
    pos = Math.min(size, pos + 8 + len + (len % 2));
  }
  return size - pos;
}
