// One part of a file read front to back: its bytes as stored, or inflated, as MAT-files compress each variable with zlib.
import { createReadStream } from 'node:fs';
import type { FileHandle } from 'node:fs/promises';
import { pipeline } from 'node:stream';
import { createInflate } from 'node:zlib';
import { RecordingError } from './recording.js';

/** Reads a part of a file in order; `at` counts the bytes taken or skipped since the part's start. */
export interface ByteCursor {
  readonly at: number;
  /** The next n bytes, copied into `into` (from 0) when given; a part that ends first is an error naming `what`. */
  take(n: number, what: string, into?: Uint8Array): Promise<Uint8Array>;
  skip(n: number, what: string): Promise<void>;
  close(): void;
}

/** A part of the element, with where it lies: a part named from its element already says so ("X: X: …" otherwise). */
const placedIn = (where: string, what: string) => (what.startsWith(where) ? what : `${where}: ${what}`);

/** Bytes [start, start + length) of an open file, as stored. */
export function storedCursor(file: FileHandle, start: number, length: number, where: string): ByteCursor {
  let at = 0;
  const cutShort = (what: string) => new RecordingError(`${placedIn(where, what)} runs past the end of its element (${length} bytes from byte ${start}); the file is damaged or cut short: copy it again`);
  return {
    get at() { return at; },
    async take(n, what, into) {
      if (at + n > length) throw cutShort(what);
      const out = into ?? new Uint8Array(n);
      const { bytesRead } = await file.read(out, 0, n, start + at);
      if (bytesRead < n) throw new RecordingError(`${placedIn(where, what)} is cut short at byte ${start + at + bytesRead}, the end of the file; copy the file again`);
      at += n;
      return out.subarray(0, n);
    },
    async skip(n, what) {
      if (at + n > length) throw cutShort(what);
      at += n;
    },
    close() { /* the file is the reader's to close */ },
  };
}

/** What zlib's error on the stream at [start, start + length) means for the file: cut short, or damaged. */
export function inflateFailure(e: unknown, where: string, start: number, length: number): RecordingError {
  const message = (e as Error)?.message ?? String(e);
  const cut = /unexpected end/i.test(message);
  return new RecordingError(`${where}: the compressed data (${length} bytes from byte ${start}) ${cut ? 'ends before its stream does; the file is cut short' : `cannot be inflated (${message}); the file is damaged`}: copy it again`);
}

/** Bytes of the zlib stream stored at [start, start + length) of the file at `path`, inflated as they are asked for. */
export function inflatedCursor(path: string, start: number, length: number, where: string): ByteCursor {
  const source = createReadStream(path, { start, end: start + Math.max(0, length) - 1, highWaterMark: 64 * 1024 });
  const inflate = createInflate({ chunkSize: 64 * 1024 });
  // The callback keeps an error from going unhandled; the iterator below throws it where the bytes are wanted.
  pipeline(source, inflate, () => {});
  const pieces = inflate[Symbol.asyncIterator]() as AsyncIterator<Buffer>;
  let piece: Buffer = Buffer.alloc(0);
  let used = 0;
  let at = 0;
  let ended = false;
  const placed = (what: string) => placedIn(where, what);
  /** Makes the current piece hold unread bytes; false at the stream's end. */
  async function fill(what: string): Promise<boolean> {
    while (used >= piece.length) {
      if (ended) return false;
      let next: IteratorResult<Buffer>;
      try { next = await pieces.next(); } catch (e) { throw inflateFailure(e, placed(what), start, length); }
      if (next.done) { ended = true; return false; }
      piece = next.value; used = 0;
    }
    return true;
  }
  const endsEarly = (what: string) => new RecordingError(`${placed(what)} runs past the end of the inflated variable (${at} bytes); the file is damaged: copy it again`);
  return {
    get at() { return at; },
    async take(n, what, into) {
      const out = into ?? new Uint8Array(n);
      for (let got = 0; got < n;) {
        if (!(await fill(what))) throw endsEarly(what);
        const k = Math.min(n - got, piece.length - used);
        out.set(piece.subarray(used, used + k), got);
        used += k; got += k; at += k;
      }
      return out.subarray(0, n);
    },
    async skip(n, what) {
      for (let left = n; left > 0;) {
        if (!(await fill(what))) throw endsEarly(what);
        const k = Math.min(left, piece.length - used);
        used += k; left -= k; at += k;
      }
    },
    close() { source.destroy(); inflate.destroy(); },
  };
}
