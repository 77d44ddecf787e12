// The byte arrays of a slice's output, listed once: the worker moves their memory to the main thread, which frees it once written.
import type { SliceOutput } from './slice.js';

export const slicePieces = (s: SliceOutput): (Uint8Array | null)[] => [...Object.values(s.tables), ...s.held, s.quality, s.overview, s.notes];
