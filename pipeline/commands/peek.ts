// A quick look at one recording: header, channels, duration and statistics, using its archive's declaration when it has one.
import { existsSync, statSync } from 'node:fs';
import { dirname, extname, join, relative, resolve, sep } from 'node:path';
import picomatch from 'picomatch';
import { ARCHIVE_FILE, loadArchiveDeclaration } from '../declare/declare.js';
import { UsageError } from '../declare/yaml-file.js';
import { readerOptionsOf, type RecordingJob } from '../plan/plan.js';
import { reduceRecording } from '../reduce/compute.js';
import type { RecordingResult } from '../reduce/result.js';
import type { RawLayout } from '../../stages/read/raw.js';
import type { Format } from '../../stages/read/recording.js';
import { formatOf } from '../../stages/read/format-of.js';
import type { DeclareHow, ReaderOptions } from '../../stages/read/open.js';

/** peek takes what a file cannot say as its own options, whatever archive.yaml declares. */
const DECLARE_AS_OPTIONS: DeclareHow = {
  format: 'give it with --format wav, flac, hdf5, mat, csv or raw',
  raw: 'give it with --sample-type, --channels and --sample-rate (and --byte-order, --header-bytes)',
  hdf5: 'give --dataset (and --channel-axis, --sample-rate-attribute, --start-time-attribute as the file needs)',
  mat: 'give --variable (and --channel-axis, --sample-rate-variable or --time-variable, --start-time-variable as the file needs)',
  where: {
    sample_rate: '--sample-rate',
    'hdf5.datasets': '--dataset',
    'hdf5.channel_axis': '--channel-axis',
    'hdf5.sample_rate_attribute': '--sample-rate-attribute',
    'hdf5.start_time_attribute': '--start-time-attribute',
    'hdf5.sample_rate_dataset': '--sample-rate-dataset',
    'hdf5.start_time_dataset': '--start-time-dataset',
    'hdf5.time_dataset': '--time-dataset',
    'hdf5.channel_names_attribute': '--channel-names-attribute',
    'mat.variables': '--variable',
    'mat.channel_axis': '--channel-axis',
    'mat.sample_rate_variable': '--sample-rate-variable',
    'mat.start_time_variable': '--start-time-variable',
    'mat.time_variable': '--time-variable',
    'mat.channel_names_variable': '--channel-names-variable',
  },
};

export interface PeekOptions extends ReaderOptions { format?: Format | null; sampleRate?: number | null; layout?: RawLayout | null }

/** The nearest folder above the file that holds archive.yaml, if any. */
function archiveOf(path: string): string | null {
  for (let dir = dirname(path); ; dir = dirname(dir)) {
    if (existsSync(join(dir, ARCHIVE_FILE))) return dir;
    if (dirname(dir) === dir) return null;
  }
}

export async function runPeek(file: string, { format = null, sampleRate = null, layout = null, hdf5 = null, mat = null, flac = null }: PeekOptions = {}): Promise<{ result: RecordingResult; declaredBy: string | null }> {
  const path = resolve(file);
  // A folder is a slip of the command, not a recording to fail: say what peek takes and where a whole archive is looked at.
  const stat = statSync(path, { throwIfNoEntry: false });
  if (!stat) throw new UsageError(`${file}: no such file; name a recording (quern check <archive> lists an archive's)`);
  if (stat.isDirectory()) throw new UsageError(`${file} is a folder: peek shows one recording, so name a file in it; quern check ${file} goes through a whole archive`);
  let job: RecordingJob = { recording: file, path, group: '(none)', format, sampleRate, layout, reader: { hdf5, mat, flac, declareHow: DECLARE_AS_OPTIONS }, channels: null, labels: {}, durationS: null, spec: {}, chunkFrames: 65536 };
  let declaredBy: string | null = null;
  const root = archiveOf(path);
  if (root) {
    const declaration = await loadArchiveDeclaration(root);
    const rel = relative(root, path).split(sep).join('/');
    const g = declaration.groups.find((group) => picomatch(group.match)(rel));
    if (g) {
      // What peek's options give wins over what the group declares.
      const given: ReaderOptions = Object.fromEntries(Object.entries({ hdf5, mat, flac }).filter(([, v]) => v != null));
      // Said, since an option replaces the group's whole section (its start time or names among it), not only the keys given.
      const fromOptions = [...Object.keys(given).map((k) => `the ${k} section`), ...(format != null ? ['the format'] : []), ...(sampleRate != null ? ['the sample rate'] : []), ...(layout != null ? ['the layout'] : [])];
      declaredBy = `${join(root, ARCHIVE_FILE)} (group "${g.name}")${fromOptions.length ? `, with ${fromOptions.join(', ')} from the command line instead of the group's` : ''}`;
      job = { ...job, recording: rel, group: g.name, format: format ?? g.format, sampleRate: sampleRate ?? g.sample_rate, layout: layout ?? g.layout, reader: { ...readerOptionsOf(g), ...given, declareHow: DECLARE_AS_OPTIONS }, channels: g.channels, labels: g.labels, durationS: g.duration_s };
    }
  }
  // What the file cannot say and no option gives is a command short of an option (exit code 2), not a bad recording.
  const told = job.format ?? formatOf(path);
  if (told == null) throw new UsageError(`${file}: cannot tell the format from the extension "${extname(path) || '(none)'}"; ${DECLARE_AS_OPTIONS.format}`);
  if (told === 'raw' && (!job.layout || job.sampleRate == null)) throw new UsageError(`${file}: raw binary needs its layout and sample rate; ${DECLARE_AS_OPTIONS.raw}`);
  return { result: await reduceRecording(job), declaredBy };
}
