// Shows progress: a bar on a terminal, one plain line per recording otherwise (nightly logs).
import { SingleBar } from 'cli-progress';
import type { RecordingResult } from './reduce.js';

export interface Progress { start(total: number): void; done(r: RecordingResult): void; stop(): void }

export function progressFor(stream: NodeJS.WriteStream = process.stderr, { quiet = false } = {}): Progress {
  if (quiet) return { start() {}, done() {}, stop() {} };
  if (stream.isTTY) {
    const bar = new SingleBar({ stream, format: 'reducing [{bar}] {value}/{total} recordings  {failed} failed  {last}', hideCursor: true, clearOnComplete: true });
    let failed = 0;
    return {
      start: (total) => bar.start(total, 0, { failed, last: '' }),
      done: (r) => { if (r.status === 'failed') failed++; bar.increment({ failed, last: r.recording.slice(-40) }); },
      stop: () => bar.stop(),
    };
  }
  let total = 0, count = 0;
  return {
    start: (t) => { total = t; },
    done: (r) => { count++; stream.write(`[${count}/${total}] ${r.recording}: ${r.status} (${r.seconds.toFixed(2)} s)${r.reason ? ` — ${r.reason}` : ''}\n`); },
    stop: () => {},
  };
}
