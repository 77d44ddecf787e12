// The worker pool on real threads: one thread starts first, more only for work that can use them, never more than asked.
import { afterEach, describe, expect, it } from 'vitest';
import type { BatchReply } from '../pipeline/reduce/batch.js';
import { openPool, type Pool } from '../pipeline/reduce/pool.js';
import type { BatchTask } from '../pipeline/reduce/worker.js';

// A batch of nothing, unwatched: all these tests need of a task is a thread to run it.
const EMPTY: BatchTask = { items: [], beats: null };

let pool: Pool | null = null;
afterEach(async () => { await pool?.destroy(); pool = null; });

describe('openPool', () => {
  it('starts one thread for one task at a time, and a second only when widened for work at once', async () => {
    pool = openPool(2);
    pool.widen(0);
    expect(pool.started()).toBe(0);
    await pool.run('reduceBatch', EMPTY);
    expect(pool.started()).toBe(1);
    pool.widen(1);
    await Promise.all([pool.run('reduceBatch', EMPTY), pool.run('reduceBatch', EMPTY)]);
    expect(pool.started()).toBe(1);
    pool.widen(8);
    await Promise.all([pool.run('reduceBatch', EMPTY), pool.run('reduceBatch', EMPTY), pool.run('reduceBatch', EMPTY)]);
    expect(pool.started()).toBe(2);
  });

  it('starts the threads a prestart asks for, up to the number it was opened with', async () => {
    pool = openPool(2);
    pool.prestart(1);
    await pool.run('reduceBatch', EMPTY);
    expect(pool.started()).toBe(1);
    pool.prestart(5);
    await pool.run('reduceBatch', EMPTY);
    expect(pool.started()).toBe(2);
  });

  it('never starts more threads than it was opened with', async () => {
    pool = openPool(1);
    pool.widen(4);
    await Promise.all([pool.run('reduceBatch', EMPTY), pool.run('reduceBatch', EMPTY)]);
    expect(pool.started()).toBe(1);
  });

  it('replaces every thread when renewed, and goes on taking tasks on new ones', async () => {
    pool = openPool(2);
    pool.widen(2);
    await Promise.all([pool.run('reduceBatch', EMPTY), pool.run('reduceBatch', EMPTY)]);
    const before = pool.threadIds();
    expect(before).toHaveLength(2);
    await pool.renew();
    const replies = await Promise.all([pool.run<BatchReply>('reduceBatch', EMPTY), pool.run<BatchReply>('reduceBatch', EMPTY)]);
    expect(replies).toEqual([{ records: [], retire: false }, { records: [], retire: false }]);
    const after = pool.threadIds();
    expect(after).toHaveLength(2);
    expect(after.filter((id) => before.includes(id))).toEqual([]);
  });
});
