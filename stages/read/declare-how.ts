// Where the user gives what a file cannot say about itself, so that a reader's message names the right place.

/** A setting a reader may ask for, by its key in archive.yaml. */
export type DeclaredSetting = 'sample_rate' | 'hdf5.datasets' | 'hdf5.channel_axis' | 'hdf5.sample_rate_attribute' | 'hdf5.start_time_attribute' | 'hdf5.sample_rate_dataset' | 'hdf5.start_time_dataset' | 'hdf5.time_dataset' | 'hdf5.channel_names_attribute'
  | 'mat.variables' | 'mat.channel_axis' | 'mat.sample_rate_variable' | 'mat.start_time_variable' | 'mat.time_variable' | 'mat.channel_names_variable';

/**
 * How to give what a file cannot say about itself: in archive.yaml for reduce and check, as options for peek. `hdf5` and
 * `mat` are the whole clauses for a missing layout; `where` names where each setting is given.
 */
export interface DeclareHow { format: string; raw: string; hdf5: string; mat: string; where: Record<DeclaredSetting, string> }

export const DECLARE_IN_ARCHIVE: DeclareHow = {
  format: 'declare format: wav, flac, hdf5, mat, csv or raw for its group in archive.yaml',
  raw: 'declare layout (sample_type, byte_order, channels, header_bytes) and sample_rate for its group in archive.yaml',
  hdf5: 'declare hdf5: { datasets: [...], channel_axis, sample_rate_attribute, start_time_attribute } in its archive.yaml group',
  mat: 'declare mat: { variables: [...], channel_axis, sample_rate_variable or time_variable, start_time_variable } in its archive.yaml group',
  where: {
    sample_rate: 'sample_rate for the group in archive.yaml',
    'hdf5.datasets': 'hdf5.datasets in archive.yaml',
    'hdf5.channel_axis': 'hdf5.channel_axis in archive.yaml',
    'hdf5.sample_rate_attribute': 'hdf5.sample_rate_attribute in archive.yaml',
    'hdf5.start_time_attribute': 'hdf5.start_time_attribute in archive.yaml',
    'hdf5.sample_rate_dataset': 'hdf5.sample_rate_dataset in archive.yaml',
    'hdf5.start_time_dataset': 'hdf5.start_time_dataset in archive.yaml',
    'hdf5.time_dataset': 'hdf5.time_dataset in archive.yaml',
    'hdf5.channel_names_attribute': 'hdf5.channel_names_attribute in archive.yaml',
    'mat.variables': 'mat.variables in archive.yaml',
    'mat.channel_axis': 'mat.channel_axis in archive.yaml',
    'mat.sample_rate_variable': 'mat.sample_rate_variable in archive.yaml',
    'mat.start_time_variable': 'mat.start_time_variable in archive.yaml',
    'mat.time_variable': 'mat.time_variable in archive.yaml',
    'mat.channel_names_variable': 'mat.channel_names_variable in archive.yaml',
  },
};
