// A delimited text file in an encoding other than UTF-8: named by its byte-order mark or the NULs of its first line,
// so the user learns what to fix instead of reading a garbled column name.
import { RecordingError } from './recording.js';

/** Byte-order marks of the encodings spreadsheets and loggers save as "Unicode text"; UTF-32 first, as it begins like UTF-16. */
const MARKS: [number[], string][] = [
  [[0xff, 0xfe, 0x00, 0x00], 'UTF-32 (little-endian)'],
  [[0x00, 0x00, 0xfe, 0xff], 'UTF-32 (big-endian)'],
  [[0xff, 0xfe], 'UTF-16 (little-endian)'],
  [[0xfe, 0xff], 'UTF-16 (big-endian)'],
];

/** What is not UTF-8 about the start of a text file, or null when nothing is. */
export function textEncodingOf(bytes: Uint8Array): string | null {
  for (const [mark, name] of MARKS) if (mark.every((b, i) => bytes[i] === b)) return `a ${name} byte-order mark`;
  const end = bytes.indexOf(0x0a);
  const first = bytes.subarray(0, end < 0 ? Math.min(bytes.length, 4096) : end);
  // UTF-8 text never holds NUL; a header of them is UTF-16 or UTF-32 saved without a mark.
  return first.includes(0) ? 'NUL bytes in its first line (UTF-16 or UTF-32 text)' : null;
}

/** Refuses text that is not UTF-8, naming what gave it away. */
export function refuseNotUtf8(bytes: Uint8Array): void {
  const found = textEncodingOf(bytes);
  if (found) throw new RecordingError(`line 1: the file is not UTF-8 text (${found}); save it as UTF-8 (with or without a byte-order mark)`);
}
