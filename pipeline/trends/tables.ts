// The columns of trends.parquet and spectra.parquet (described in schemas/features.table.json).
import type { TableColumn } from '../outputs/parquet.js';

const text = (name: string, description: string, nullable = false): TableColumn => ({ name, type: 'string', nullable, unit: '', description });

/** trends.parquet: one row per recording × channel × watched feature of the recordings the run covers. */
export const TRENDS_TABLE: TableColumn[] = [
  text('recording', 'Path of the recording relative to the archive root.'),
  text('group', 'Declaration group the recording belongs to.'),
  text('channel', 'Channel name.'),
  text('feature', 'The watched column of features.parquet.'),
  text('unit', 'Unit of value and baseline (the channel\'s unit for amplitudes, mm/s for velocity, 1 for ratios).'),
  { name: 'start_time', type: 'timestamp_ms_utc', nullable: true, unit: 'UTC', description: 'Where the history places the recording: the start of the capture, or the file\'s modification time when the recording keeps no start (start_time_source says which).' },
  text('start_time_source', 'Where start_time comes from: recording (the start the file keeps, or its group declares) or modified (the file\'s modification time, the recording keeping none).'),
  { name: 'value', type: 'float64', nullable: false, unit: '[feature unit]', description: 'The feature\'s value on this recording (as in features.parquet).' },
  { name: 'baseline', type: 'float64', nullable: true, unit: '[feature unit]', description: 'Median of the feature over the channel\'s baseline recordings; null while the baseline is forming.' },
  { name: 'change_db', type: 'float64', nullable: true, unit: 'dB', description: '20·log10(value / baseline) for level-like features (amplitudes, crest factor), 10·log10 for mean squares, the difference for figures in dB; null otherwise.' },
  { name: 'score', type: 'float64', nullable: true, unit: '1', description: 'Robust z-score (value − baseline) / max(1.4826 × MAD, spread_floor × |baseline|, 1e-9 × |baseline|) over the baseline recordings (1e-12 where that is 0).' },
  text('verdict', 'steady, changed (beyond the change thresholds or at a warn limit) or alarm (at an alarm limit), each held until the value is back inside its threshold by the deadband; null while the baseline is forming or when the channel fails the data-quality checks.', true),
  text('limit', 'The declared limit the value is at or beyond: warn or alarm; null for none.', true),
  text('quality', 'The channel\'s data-quality verdict on this recording: ok, note, warn or fail.'),
  { name: 'floor', type: 'float64', nullable: true, unit: '[feature unit]', description: 'The measurable floor (10⁻⁶ of the channel\'s RMS for a level) where the baseline or the value lies below it: change_db is then a bound (from a baseline below it: a rise of at least; to a value below it: a fall of at least), null when both lie below it (steady); null otherwise.' },
];

/** spectra.parquet: one row per recording × channel × frequency bin of the averaged Welch spectrum. */
export const SPECTRA_TABLE: TableColumn[] = [
  text('recording', 'Path of the recording relative to the archive root.'),
  text('channel', 'Channel name.'),
  text('unit', 'Engineering unit of the channel; the density is in its square per hertz.'),
  { name: 'frequency_hz', type: 'float64', nullable: false, unit: 'Hz', description: 'Bin frequency k·fs/segment.' },
  { name: 'density', type: 'float64', nullable: false, unit: '[unit]²/Hz', description: 'One-sided Welch power spectral density (spec section spectrum), kept in single precision.' },
];
