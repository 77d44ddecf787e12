// A quick look at one recording: header, channels, duration and statistics, using its archive's declaration when it has one.
import { existsSync } from 'node:fs';
import { dirname, join, relative, resolve, sep } from 'node:path';
import picomatch from 'picomatch';
import { ARCHIVE_FILE, loadArchiveDeclaration } from '../declare/declare.js';
import type { RecordingJob } from '../plan/plan.js';
import { reduceRecording } from '../reduce/compute.js';
import type { RecordingResult } from '../reduce/result.js';
import type { RawLayout } from '../../stages/read/raw.js';
import type { Format } from '../../stages/read/recording.js';
import type { ReaderOptions } from '../../stages/read/open.js';

export interface PeekOptions extends ReaderOptions { format?: Format | null; sampleRate?: number | null; layout?: RawLayout | null }

/** The nearest folder above the file that holds archive.yaml, if any. */
function archiveOf(path: string): string | null {
  for (let dir = dirname(path); ; dir = dirname(dir)) {
    if (existsSync(join(dir, ARCHIVE_FILE))) return dir;
    if (dirname(dir) === dir) return null;
  }
}

export async function runPeek(file: string, { format = null, sampleRate = null, layout = null, hdf5 = null, flac = null }: PeekOptions = {}): Promise<{ result: RecordingResult; declaredBy: string | null }> {
  const path = resolve(file);
  let job: RecordingJob = { recording: file, path, group: '(none)', format, sampleRate, layout, reader: { hdf5, flac }, channels: null, labels: {}, durationS: null, spec: {}, chunkFrames: 65536 };
  let declaredBy: string | null = null;
  const root = archiveOf(path);
  if (root) {
    const declaration = await loadArchiveDeclaration(root);
    const rel = relative(root, path).split(sep).join('/');
    const g = declaration.groups.find((group) => picomatch(group.match)(rel));
    if (g) {
      declaredBy = `${join(root, ARCHIVE_FILE)} (group "${g.name}")`;
      job = { ...job, recording: rel, group: g.name, format: format ?? g.format, sampleRate: sampleRate ?? g.sample_rate, layout: layout ?? g.layout, reader: { hdf5: hdf5 ?? g.hdf5, flac: flac ?? g.flac }, channels: g.channels, labels: g.labels, durationS: g.duration_s };
    }
  }
  return { result: await reduceRecording(job), declaredBy };
}
