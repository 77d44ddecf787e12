// The marks' list of late arrivals in no finished run's tables: bounded, and read back as written. Reference: the README's
// rule (named until a run's tables hold them; at most 1000 listed, the rest counted with the stretch of their starts).
import { describe, expect, it } from 'vitest';
import { bookAfter, emptyBook, keptBook, MOST_LATE_LISTED, readBook, standingBook } from '../pipeline/select/pending-late.js';

const day = (n: number) => Date.UTC(2026, 0, 1) + n * 86_400_000;
const bookOf = (asOf: number, n: number, first = 0) => ({ ...emptyBook(asOf), listed: new Map(Array.from({ length: n }, (_, i) => [`rig/${first + i}.wav`, day(first + i)] as [string, number])) });

describe('the late arrivals the marks carry', () => {
  it('lists the earliest 1000 by start and counts the rest with their stretch, and reads back what it wrote', () => {
    const kept = keptBook(bookOf(day(2000), MOST_LATE_LISTED + 5));
    expect(kept.late.listed.length).toBe(MOST_LATE_LISTED);
    expect(kept.late.listed[0]).toEqual(['rig/0.wav', new Date(day(0)).toISOString()]);
    expect(kept.late.unlisted).toEqual({ count: 5, from: new Date(day(1000)).toISOString(), to: new Date(day(1004)).toISOString() });
    const back = readBook(JSON.parse(JSON.stringify(kept)))!;
    expect(back.asOf).toBe(day(2000));
    expect(back.listed.size).toBe(MOST_LATE_LISTED);
    expect(back.unlisted).toEqual({ count: 5, from: day(1000), to: day(1004) });
    // Kept again, the rest stays counted once.
    expect(keptBook(back).late.unlisted!.count).toBe(5);
  });

  it('drops what a finished run\'s tables hold and what left the archive, and keeps the rest until a run covers their whole stretch', () => {
    const b = { ...bookOf(day(10), 3), unlisted: { count: 4, from: day(5), to: day(8) } };
    const present = (r: string) => (r === 'rig/2.wav' ? undefined : null);
    const after = bookAfter(b, [{ recording: 'rig/new.wav', start: day(9) }], present, day(11), { from: day(1), to: day(7) });
    expect([...after.listed]).toEqual([['rig/0.wav', day(0)], ['rig/new.wav', day(9)]]);
    expect(after.unlisted).toEqual(b.unlisted);
    expect(bookAfter(b, [], present, day(11), { from: -Infinity, to: day(11) })).toEqual({ asOf: day(11), listed: new Map(), unlisted: null });
    // A shard's run holds no finished tables: it takes nothing off.
    expect(bookAfter(b, [], () => null, day(11), null).listed.size).toBe(3);
  });

  it('stands on the newest whole run\'s or merge\'s list, with the lists of shards that ran after it', () => {
    const whole = bookOf(day(10), 1, 0), merged = bookOf(day(12), 1, 1), oldShard = bookOf(day(11), 1, 2), newShard = bookOf(day(13), 1, 3);
    expect([...standingBook([whole, merged], [oldShard, newShard])!.listed.keys()]).toEqual(['rig/1.wav', 'rig/3.wav']);
    expect(standingBook([], [])).toBeNull();
    expect(readBook({ late: { as_of: 'never', listed: [] } })).toBeNull();
  });
});
