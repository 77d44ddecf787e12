// The bytes of a recording file: a small file is read whole when opened (one open, one read, one close, no waiting on
// the I/O threads), a larger one through its open handle. Readers see the same positioned reads either way.
import { closeSync, fstatSync, openSync, readSync } from 'node:fs';
import { open } from 'node:fs/promises';

/** Positioned reads, as a FileHandle gives them. */
export interface ByteReader {
  read(buffer: Uint8Array, offset: number, length: number, position: number): Promise<{ bytesRead: number }>;
}

export interface ByteSource extends ByteReader {
  /** Size of the file when it was opened, bytes. */
  size: number;
  close(): Promise<void>;
}

/** Files up to this size are read whole when opened: enough for the short recordings an archive holds by the thousand. */
export const WHOLE_FILE_BYTES = 1 << 20;

/** A file's bytes held in memory, read in one piece. */
function inMemory(bytes: Buffer): ByteSource {
  return {
    size: bytes.length,
    read: async (buffer, offset, length, position) => {
      const n = Math.max(0, Math.min(length, bytes.length - position));
      if (n > 0) buffer.set(bytes.subarray(position, position + n), offset);
      return { bytesRead: n };
    },
    close: async () => {},
  };
}

/** Opens a file for positioned reads; one of `wholeUpTo` bytes or fewer is read at once (a blocking read of a bounded size). */
export async function openSource(path: string, { wholeUpTo = WHOLE_FILE_BYTES }: { wholeUpTo?: number } = {}): Promise<ByteSource> {
  const fd = openSync(path, 'r');
  let size: number;
  try {
    size = fstatSync(fd).size;
    if (size <= wholeUpTo) {
      const bytes = Buffer.allocUnsafe(size);
      let got = 0;
      while (got < size) {
        const n = readSync(fd, bytes, got, size - got, got);
        if (n === 0) break; // shrank since fstat: what is there is the file
        got += n;
      }
      return inMemory(got === size ? bytes : bytes.subarray(0, got));
    }
  } finally {
    closeSync(fd);
  }
  const fh = await open(path, 'r');
  return { size: (await fh.stat()).size, read: (buffer, offset, length, position) => fh.read(buffer, offset, length, position), close: () => fh.close() };
}
