// A recording that stops making progress (a reader caught in a loop by a damaged file, a file system that stopped
// answering) must not hold a night's run: its worker beats as it goes, a batch whose beats stop is given up, and its
// recordings fail with the reasons below.

/** Beats a worker's task counts as it goes (a chunk read, a recording begun or finished), shared with the main thread. */
export type Beats = Int32Array;

export const newBeats = (): Beats => new Int32Array(new SharedArrayBuffer(4));

/** One step of progress; no beats (null) when nobody watches. */
export function beat(beats: Beats | null): void {
  if (beats) Atomics.add(beats, 0, 1);
}

export interface StallWatch {
  /** Aborts once the beats have not moved for the stall limit. */
  signal: AbortSignal;
  /** Whether it aborted for that reason. */
  stalled(): boolean;
  stop(): void;
}

/**
 * Watches `beats` from the main thread and aborts when they have not moved for `stallMs`. The limit counts from the
 * first beat: a task still waiting for a thread, or a thread still starting, has not stalled.
 */
export function watchStall(beats: Beats, stallMs: number, { everyMs = Math.min(5_000, Math.max(1, stallMs / 4)) } = {}): StallWatch {
  const controller = new AbortController();
  let seen = 0, since = 0, stalled = false;
  const timer = setInterval(() => {
    const now = Atomics.load(beats, 0), t = performance.now();
    if (now !== seen || since === 0) {
      if (now !== 0) { seen = now; since = t; }
      return;
    }
    if (t - since >= stallMs) {
      stalled = true;
      clearInterval(timer);
      controller.abort(new Error(`no progress for ${stallMs / 1000} s`));
    }
  }, everyMs);
  // The watch alone never keeps the process alive.
  timer.unref();
  return { signal: controller.signal, stalled: () => stalled, stop: () => clearInterval(timer) };
}

/** A failure that says nothing of the file itself: the next run tries it again. */
export class NoProgress extends Error {}

/** A recording whose reduction made no progress for the stall limit; `again` says so of one that stalled in the run before too. */
export class Stalled extends NoProgress {
  readonly again: string;
  constructor(stallMs: number) {
    const what = `made no progress for ${stallMs / 1000} s (--stall-limit): its worker was stopped and the run went on. `;
    super(`${what}The file system may have stopped answering, or the reader cannot get through the file; the next run tries it again, `
      + 'and keeps it as failed if it stalls there too with the file unchanged');
    // Two nights in a row on an unchanged file: the reader cannot get through it, and trying it every night costs a stall limit each.
    this.again = `${what}It stalled in the run before as well, with the file unchanged, so it is kept as failed and not tried again `
      + 'until the file, its declaration, the spec or quern changes; once the storage or the file is mended, run with --retry-failed';
  }
}

/** A recording the run did not try, after recordings before it stalled one after another. */
export class NotTried extends NoProgress {
  constructor(inARow: number, stallMs: number) {
    super(`not tried: the ${inARow} recordings before it made no progress for ${stallMs / 1000} s each (--stall-limit), none reduced between them, `
      + 'so the run stopped reading; the file system may have stopped answering. The next run tries it again');
  }
}
