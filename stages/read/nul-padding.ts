// A logger that sets its file's size before writing (pre-allocation) leaves NUL bytes past the text it wrote: trailing NULs
// are padding, left out; a NUL before the end of the text is damage, since UTF-8 text never holds one (RFC 3629).
import type { FileHandle } from 'node:fs/promises';

const BLOCK = 1 << 16;

/** How many NUL bytes end a file of `size` bytes, read back from its end a block at a time. */
export async function trailingNuls(fh: FileHandle, size: number): Promise<number> {
  const block = Buffer.alloc(Math.min(BLOCK, Math.max(1, size)));
  let end = size;
  while (end > 0) {
    const from = Math.max(0, end - block.length), n = end - from;
    await fh.read(block, 0, n, from);
    let i = n - 1;
    while (i >= 0 && block[i] === 0) i--;
    if (i >= 0) return size - (from + i + 1);
    end = from;
  }
  return size;
}

/** The offset of the first NUL byte before `end`, or −1. */
export async function firstNul(fh: FileHandle, end: number): Promise<number> {
  const block = Buffer.alloc(Math.min(BLOCK, Math.max(1, end)));
  for (let from = 0; from < end; from += block.length) {
    const n = Math.min(block.length, end - from);
    await fh.read(block, 0, n, from);
    const i = block.subarray(0, n).indexOf(0);
    if (i >= 0) return from + i;
  }
  return -1;
}

/** The note on a file whose padding was left out. */
export const paddingNote = (bytes: number) =>
  `the file ends in ${bytes} NUL bytes, padding a logger writes ahead of its data (a file sized before it was written); left out`;
