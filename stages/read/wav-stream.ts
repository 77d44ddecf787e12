// A data chunk whose size its writer never wrote: a writer streaming to a pipe cannot seek back to fill the sizes in, so
// it leaves 0xFFFFFFFF (ffmpeg 5.1) or 0 (others) there (common practice). When the data chunk is the file's last, its
// samples run to the end of the file, which is how libsndfile 1.2 reads a size of 0xFFFFFFFF (checked with soundfile).

/** The size a streaming writer leaves in place of the data chunk's own (RIFF's 32-bit size field at its largest). */
export const STREAMED_SIZE = 0xffffffff;

/** What to read of a data chunk whose size was never written: its bytes to the end of the file, and the note that says so. */
export interface StreamedData { size: number; note: string }

/**
 * Whether a RIFF data chunk's size was never written: 0xFFFFFFFF, or 0 with bytes after it that form no whole chunks (an
 * empty data chunk followed by LIST or other chunks is empty indeed, and libsndfile reads it so).
 */
export const sizeNeverWritten = (declared: number, present: number, afterAreChunks: boolean): boolean =>
  declared === STREAMED_SIZE || (declared === 0 && present > 0 && !afterAreChunks);

/**
 * The samples of a data chunk whose size was never written, read to the end of the file (`present` bytes from its start,
 * `at` the byte of its size field); a partial last frame is left to the reader's own note.
 */
export function streamedData(declared: number, present: number, at: number, frameBytes: number): StreamedData {
  const frames = Math.floor(present / Math.max(1, frameBytes));
  return {
    size: present,
    note: `the data chunk's size (byte ${at}) was never written (${declared}), as a writer streaming to a pipe leaves it: its samples were read to the end of the file, ${frames} frames; if anything but samples follows them, the header cannot say so: to be sure, write the file again with its sizes (sox in.wav out.wav)`,
  };
}

/** The refusal for a data chunk whose size was never written and whose end cannot be known, as other chunks follow it. */
export const streamedNotLast = (declared: number, at: number, why: string): string =>
  `byte ${at}: the data chunk's size was never written (${declared}), as a writer streaming to a pipe leaves it, and ${why}, so where its samples end is unknown; write the file again with its sizes (sox in.wav out.wav) and reduce the copy`;
