// Validates the declaration and every recording's header against it; computes nothing.
import { resolve } from 'node:path';
import { loadArchiveDeclaration, loadSpec } from '../declare/declare.js';
import { plan } from '../plan/plan.js';
import { openForJob } from '../reduce/compute.js';
import { scan } from '../select/scan.js';
import { RecordingError } from '../../stages/read/recording.js';
import { defaultOut } from '../run.js';
import { trendOptions } from '../trends/options.js';

export interface CheckedRecording { recording: string; group: string; ok: boolean; detail: string }
export interface CheckResult { recordings: CheckedRecording[]; unmatched: string[]; spec: string }

export async function runCheck(archive: string, { spec: specPath = null as string | null, out = null as string | null } = {}): Promise<CheckResult> {
  const root = resolve(archive);
  const declaration = await loadArchiveDeclaration(root);
  const spec = await loadSpec(root, specPath);
  trendOptions(spec.spec); // a trends section that cannot work is named now
  const scanned = await scan(root, declaration, { exclude: [resolve(out ?? defaultOut(root))] });
  const recordings: CheckedRecording[] = [];
  for (const job of plan(scanned.recordings, declaration.groups, spec.spec)) {
    try {
      const { rec, channels } = await openForJob(job);
      await rec.close();
      const duration = rec.frames != null ? `${(rec.frames / rec.sampleRate).toFixed(3)} s` : 'duration known after reading';
      recordings.push({ recording: job.recording, group: job.group, ok: true, detail: `${rec.format} ${rec.encoding}, ${channels.length} channels (${channels.map((c) => c.decl.name).join(', ')}), ${rec.sampleRate} Hz, ${duration}` });
    } catch (e) {
      recordings.push({ recording: job.recording, group: job.group, ok: false, detail: e instanceof RecordingError ? e.message : String((e as Error).message) });
    }
  }
  return { recordings, unmatched: scanned.unmatched, spec: spec.source };
}
