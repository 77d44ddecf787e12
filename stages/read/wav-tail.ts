// What follows a WAV file's data chunk: chunks (LIST, id3, cue…) and appended ID3 tags are normal there; other bytes
// may be samples the data chunk's size leaves out, so their count becomes a note. A bext chunk there gives the start time.

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

/**
 * What follows the data chunk: the bytes no chunk, padding byte or ID3 tag accounts for; where a bext chunk's body lies,
 * if one does; and a chunk that writers leave after the data whose size runs past the end of the file, if the walk met one.
 */
export interface WavTail { unaccounted: number; bext: { at: number; size: number } | null; cut: { id: string; at: number; size: number } | null }

// Chunks writers leave after the data (RIFF, Microsoft 1991; EBU Tech 3285 and 3306; iXML; common practice): a header
// with one of these ids that runs past the end is a chunk cut short, not samples the data size left out.
const TRAILING_IDS: ReadonlySet<string> = new Set(['LIST', 'bext', 'iXML', 'axml', 'id3 ', 'ID3 ', 'cue ', 'smpl', 'inst', 'JUNK', 'junk', 'PAD ', 'cart', 'umid', 'chna', 'PEAK', 'levl', '_PMX', 'acid', 'DISP']);

/** Walks the chunks from `from` to the end of the file (RIFF fixes no order: an editor may append a grown bext after the data). */
export async function walkTail(bytesAt: BytesAt, from: number, size: number, little: boolean): Promise<WavTail> {
  let pos = from;
  let bext: WavTail['bext'] = null, cut: WavTail['cut'] = null;
  for (let n = 0; n < MAX_TAIL_CHUNKS && pos < size; n++) {
    const head = await bytesAt(pos, 10);
    // ID3v1 (128 bytes from "TAG") closes a file; ID3v2 may be appended raw rather than in an "id3 " chunk.
    if (size - pos === 128 && head.toString('latin1', 0, 3) === 'TAG') return { unaccounted: 0, bext, cut };
    const tag = id3v2Length(head);
    if (tag > 0 && pos + tag <= size) { pos += tag; continue; }
    if (head.length < 8 || !isChunkId(head)) break;
    const len = little ? head.readUInt32LE(4) : head.readUInt32BE(4);
    const id = head.toString('latin1', 0, 4);
    if (pos + 8 + len > size) {
      if (TRAILING_IDS.has(id)) cut = { id, at: pos, size: len };
      break;
    }
    if (bext === null && id === 'bext') bext = { at: pos + 8, size: len };
    // A last chunk of odd length may lack its padding byte.
    pos = Math.min(size, pos + 8 + len + (len % 2));
  }
  return { unaccounted: size - pos, bext, cut };
}
