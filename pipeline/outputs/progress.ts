// Progress of a run: a bar on a terminal; plain lines, or JSON lines (--log json), when nightly jobs write to a log.
import { SingleBar } from 'cli-progress';
import type { RecordingOutput } from '../reduce/result.js';

type Done = Pick<RecordingOutput, 'recording' | 'status' | 'seconds' | 'reason'>;
/** `stop` ends the progress: a bar on a terminal is cleared, its line ended and the cursor shown again; it may be called more than once. */
export interface Progress { start(total: number, reused: number): void; done(r: Done, detail?: string): void; stop(): void; event?(name: string, data: object): void }

/**
 * A way of telling a message on the progress's stream that stops the progress first: a bar on a terminal holds its line
 * open (no line end), and a message written then would run on after it.
 */
export function afterProgress<A extends unknown[]>(progress: Pick<Progress, 'stop'>, say: (...a: A) => void): (...a: A) => void {
  return (...a) => { progress.stop(); say(...a); };
}

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
