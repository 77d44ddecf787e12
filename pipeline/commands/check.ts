// Validates the declaration and every recording's header against it; computes nothing.
import { resolve } from 'node:path';
import { loadArchiveDeclaration, loadSpec } from '../declare/declare.js';
import { reservedColumnNames } from '../outputs/output-tables.js';
import { plan } from '../plan/plan.js';
import { openForJob } from '../reduce/compute.js';
import { scan } from '../select/scan.js';
import { quantityUses } from '../declare/quantity-uses.js';
import { archiveChannels, selectorNotes, unwatchedFeatureNotes } from '../declare/empty-selectors.js';
import { unfedGroupNote, unfedGroups } from '../select/group-coverage.js';
import { RecordingError } from '../../stages/read/recording.js';
import { defaultOut } from '../run.js';
import { namingNone, trendOptions, type ChannelAt, type TrendOptions } from '../trends/options.js';

export interface CheckedRecording { recording: string; group: string; ok: boolean; detail: string }
/**
 * `notes`: what may be wrong without stopping a run (a quantity near one the spec selects by, a unit its figures cannot
 * convert, a spec `only:` selector or watched trend feature that selects no channel, a group that gets no recording, trend entries naming no channel of the archive's recordings).
 */
export interface CheckResult { recordings: CheckedRecording[]; unmatched: string[]; spec: string; notes: string[] }

export async function runCheck(archive: string, { spec: specPath = null as string | null, out = null as string | null } = {}): Promise<CheckResult> {
  const root = resolve(archive);
  const spec = await loadSpec(root, specPath);
  const declaration = await loadArchiveDeclaration(root, reservedColumnNames(spec.spec), quantityUses(spec.spec));
  const trends = trendOptions(spec.spec); // a trends section that cannot work is named now
  const scanned = await scan(root, declaration, { exclude: [resolve(out ?? defaultOut(root))] });
  const recordings: CheckedRecording[] = [];
  const channelsSeen = new Map<string, { group: string; channel: string }>();
  for (const job of plan(scanned.recordings, declaration.groups, spec.spec)) {
    try {
      const { rec, channels, notes } = await openForJob(job);
      // A time vector's lost samples are read as missing samples, so they count in the duration as reduce's duration_s counts them.
      let frames: number | null;
      try { frames = rec.framesOfTimes ? await rec.framesOfTimes() : rec.frames; } finally { await rec.close(); }
      const duration = frames != null ? `${(frames / rec.sampleRate).toFixed(3)} s` : 'duration known after reading';
      // Where a --since period will place the recording: its own start, else its modification time.
      // The reader's own notes from its header (a size never written, padding left out) beside the declaration's.
      const start = rec.startTime ? `starts ${rec.startTime.toISOString()}` : 'no start in the file (a period goes by its modification time)';
      recordings.push({ recording: job.recording, group: job.group, ok: true, detail: `${rec.format} ${rec.encoding}, ${channels.length} channel${channels.length === 1 ? '' : 's'} (${channels.map((c) => c.decl.name).join(', ')}), ${rec.sampleRate} Hz, ${duration}, ${start}${[...notes, ...rec.notes].map((n) => `; note: ${n}`).join('')}` });
      for (const c of channels) channelsSeen.set(`${job.group}\u0000${c.decl.name}`, { group: job.group, channel: c.decl.name });
    } catch (e) {
      // Where a period places it: a start its header gave before it failed, else its modification time.
      const start = e instanceof RecordingError && e.startTime ? `starts ${e.startTime.toISOString()} (read before it failed)` : 'no start could be read (a period goes by its modification time)';
      recordings.push({ recording: job.recording, group: job.group, ok: false, detail: `${e instanceof RecordingError ? e.message : String((e as Error).message)}; ${start}` });
    }
  }
  const groups = unfedGroups(declaration.groups, scanned.recordings, declaration.lines).map((u) => unfedGroupNote(u));
  const declared = archiveChannels(declaration);
  const selectors = [...selectorNotes(spec.spec, declared, spec.source), ...unwatchedFeatureNotes(spec.spec, trends, declared, spec.source)];
  return { recordings, unmatched: scanned.unmatched, spec: spec.source, notes: [...declaration.notes ?? [], ...selectors, ...groups, ...(trends ? trendNamesUnseen(trends, [...channelsSeen.values()]) : [])] };
}

/** Baseline restarts and per-channel limits that name no channel these recordings have: a typo, found before any night's run. */
function trendNamesUnseen(o: TrendOptions, seen: ChannelAt[]): string[] {
  if (!seen.length) return [];
  const { restarts, limits } = namingNone(o, seen);
  return [
    ...restarts.map((r) => `trends.baseline.restart ${r.text} names no channel of these recordings; check its channel and group`),
    ...limits.map((r) => `trends.limits ${r.names} names no channel of these recordings, so it could never be reached; check its channel and group`),
  ];
}
