// The filters a dataset's chunks pass through (its filter pipeline), held against those the HDF5 library here has: a
// dataset compressed with a filter it lacks (LZF, Blosc, bitshuffle…) cannot be read, whatever the file's state.

/** A filter of a dataset's pipeline, as h5wasm gives it: its registered id, the name the file stores, its parameters. */
export interface PipelineFilter { id: number; name: string }

// HDF5 File Format Specification, filter pipeline message: ids 1–6 are the library's own (deflate, shuffle, fletcher32,
// szip, nbit, scaleoffset), all compiled into h5wasm 0.10.3 (each read back from files h5py wrote, make-reader-cases.py).
export const BUILT_IN_FILTERS: ReadonlySet<number> = new Set([1, 2, 3, 4, 5, 6]);

// The HDF Group's list of registered filter plugins, for files that store no name (from memory).
const REGISTERED_NAMES: ReadonlyMap<number, string> = new Map([
  [307, 'bzip2'], [32000, 'LZF'], [32001, 'Blosc'], [32004, 'LZ4'], [32008, 'bitshuffle'], [32013, 'zfp'], [32015, 'Zstandard'], [32026, 'Blosc2'],
]);

/** The first filter of the pipeline that the library lacks, or null when it has them all. */
export function missingFilter(filters: readonly PipelineFilter[]): PipelineFilter | null {
  return filters.find((f) => !BUILT_IN_FILTERS.has(f.id)) ?? null;
}

/** A filter's name for a message: the registered one where known (the file's own may be a writer's label, such as "lzf"), else the file's, else none. */
export function filterName(f: PipelineFilter): string {
  return REGISTERED_NAMES.get(f.id) ?? (f.name.trim() ? `"${f.name.trim()}"` : 'an unnamed');
}

/** Why a dataset compressed with a filter the library lacks cannot be read, and how to save it so that it can. */
export function missingFilterMessage(dataset: string, file: string, f: PipelineFilter): string {
  const out = file.replace(/(\.[^./]*)?$/, (ext) => `-gzip${ext || '.h5'}`);
  return `dataset "${dataset}" is compressed with the ${filterName(f)} filter (HDF5 filter ${f.id}), which quern's HDF5 library does not have, so its samples cannot be read; `
    + `save the file again with gzip compression: h5repack -f GZIP=4 ${file} ${out} (or h5py's compression='gzip')`;
}
