// A chunk of odd size whose writer left out the pad byte RIFF puts after it (RIFF, Microsoft 1991: every chunk is padded
// to an even length; from memory): the chunks after it lie one byte earlier than the rule has them. Taken only when the
// walk from there meets whole chunks with readable ids all the way to the data chunk, so random bytes are never read as one.

type BytesAt = (at: number, length: number) => Promise<Buffer>;

/** An odd-sized chunk met on the walk: its id, where its header starts, its declared size. */
export interface OddChunk { id: string; at: number; size: number }

/** Odd chunks tried, and chunks walked from each (our bounds: a header holds a handful of chunks). */
const MOST_TRIED = 16, MOST_WALKED = 1024;

const isChunkId = (b: Buffer) => b.length >= 4 && [0, 1, 2, 3].every((i) => b[i] >= 0x20 && b[i] <= 0x7e);

/** Whether the chunks from `pos` have readable ids and fit the file up to a data chunk (which the reader checks itself). */
export async function chunksReachData(bytesAt: BytesAt, pos: number, size: number, little: boolean): Promise<boolean> {
  for (let n = 0; n < MOST_WALKED && pos + 8 <= size; n++) {
    const head = await bytesAt(pos, 8);
    if (!isChunkId(head)) return false;
    if (head.toString('latin1', 0, 4) === 'data') return true;
    const len = little ? head.readUInt32LE(4) : head.readUInt32BE(4);
    if (pos + 8 + len > size) return false;
    pos += 8 + len + (len % 2);
  }
  return false;
}

/** The first odd chunk (of those the walk met) after which the chunks lie whole one byte early, or null. */
export async function unpaddedChunk(bytesAt: BytesAt, size: number, little: boolean, odd: OddChunk[]): Promise<OddChunk | null> {
  for (const c of odd.slice(0, MOST_TRIED)) {
    if (await chunksReachData(bytesAt, c.at + 8 + c.size, size, little)) return c;
  }
  return null;
}
