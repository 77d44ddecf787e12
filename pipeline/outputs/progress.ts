// Progress of a run: a bar on a terminal; plain lines, or JSON lines (--log json), when nightly jobs write to a log.
import { SingleBar } from 'cli-progress';
import type { RecordingOutput } from '../reduce/result.js';

type Done = Pick<RecordingOutput, 'recording' | 'status' | 'seconds' | 'reason'>;
export interface Progress { start(total: number, reused: number): void; done(r: Done, detail?: string): void; stop(): void; event?(name: string, data: object): void }

export type LogMode = 'auto' | 'plain' | 'json' | 'quiet';

/** One JSON line of the log: its time, then the event and its fields. */
export const jsonLine = (stream: NodeJS.WritableStream, o: object) => stream.write(JSON.stringify({ time: new Date().toISOString(), ...o }) + '\n');

export function progressFor(stream: NodeJS.WriteStream = process.stderr, { mode = 'auto' as LogMode } = {}): Progress {
  if (mode === 'quiet') return { start() {}, done() {}, stop() {} };
  if (mode === 'json') {
    const line = (o: object) => jsonLine(stream, o);
    return {
      start: (total, reused) => line({ event: 'start', to_reduce: total, reused }),
      done: (r, detail) => line({ event: 'recording', recording: r.recording, status: r.status, seconds: Number(r.seconds.toFixed(3)), ...(r.reason ? { reason: r.reason } : {}), ...(detail ? { detail } : {}) }),
      stop: () => {},
      event: (name, data) => line({ event: name, ...data }),
    };
  }
  if (mode === 'auto' && stream.isTTY) {
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
    start: (t, reused) => { total = t; stream.write(`reducing ${t} recording${t === 1 ? '' : 's'}${reused ? `, reusing ${reused}` : ''}\n`); },
    done: (r, detail) => { count++; stream.write(`[${count}/${total}] ${r.recording}: ${r.status} (${r.seconds.toFixed(2)} s)${detail ? ` ${detail}` : ''}${r.reason ? ` — ${r.reason}` : ''}\n`); },
    stop: () => {},
  };
}
