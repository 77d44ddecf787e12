// Runs never collide: a second run into a folder in use is refused and told who holds it; a lock whose holder is gone is taken over.
import { spawn } from 'node:child_process';
import { chmodSync, cpSync, existsSync, mkdirSync, readFileSync, readlinkSync, utimesSync, writeFileSync } from 'node:fs';
import { hostname } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { makeSampleArchive } from '../scripts/make-sample-archive.js';
import { quern, readJson, repo, sampleArchiveCopy, tempDir } from './helpers.js';

/** The sample archive with more recordings, so that a run lasts long enough to be caught holding its lock. */
function longerArchive(): string {
  const archive = join(tempDir(), 'archive');
  makeSampleArchive(archive);
  for (let d = 0; d < 24; d++) cpSync(join(archive, 'nightly', '2026-11-16'), join(archive, 'nightly', `2026-12-${String(d + 1).padStart(2, '0')}`), { recursive: true });
  return archive;
}

const startRun = (archive: string, out: string) => spawn(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), 'reduce', archive, '--out', out, '--jobs', '1', '--quiet'], { stdio: 'ignore' });

async function until(what: () => boolean, ms = 60_000): Promise<void> {
  const deadline = Date.now() + ms;
  while (!what() && Date.now() < deadline) await new Promise((r) => setTimeout(r, 10));
}

/** A run of the longer archive, once it holds its lock: the process, the lock's path and what the lock says. */
async function runHoldingLock() {
  const archive = longerArchive(), out = join(archive, '..', 'out'), lock = join(out, 'run.lock');
  const run = startRun(archive, out);
  await until(() => existsSync(lock) && readFileSync(lock, 'utf8').includes('"pid"'));
  return { archive, out, lock, run, holder: JSON.parse(readFileSync(lock, 'utf8')) };
}

/** A process as Linux names it for good, read here from /proc independently of quern's code (start: field 22, after the name). */
function procIdentity(pid: number | 'self') {
  const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
  return { boot: readFileSync('/proc/sys/kernel/random/boot_id', 'utf8').trim(), start_ticks: Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[19]), pid_namespace: readlinkSync(`/proc/${pid}/ns/pid`) };
}

/** A pid that no process on this host has now. */
function unusedPid(): number {
  for (let pid = 4_000_000; ; pid++) {
    try { process.kill(pid, 0); } catch (e) { if ((e as NodeJS.ErrnoException).code === 'ESRCH') return pid; }
  }
}

describe('one run at a time per output folder', () => {
  it('refuses a second run while the first holds the lock, with exit code 2 and the holder named', async () => {
    const { archive, out, lock, run: first, holder } = await runHoldingLock();
    expect(holder).toMatchObject({ host: hostname(), pid: first.pid, command: `quern reduce ${archive} --out ${out} --jobs 1 --quiet` });
    expect(Date.parse(holder.started)).toBeGreaterThan(Date.now() - 120_000);
    const second = quern('reduce', archive, '--out', out, '--quiet');
    const firstCode = await new Promise<number | null>((r) => first.on('exit', r));
    expect(second.code).toBe(2);
    expect(second.stderr).toContain(`is in use by another run: host ${hostname()}, pid ${first.pid}, started ${holder.started}`);
    expect(firstCode).toBe(1); // the planted truncated recording; the first run was not disturbed
    expect(existsSync(lock)).toBe(false); // released at the end
    expect(readJson(join(out, 'run.json')).counts.selected).toBe(35);
  });

  it('takes over the lock of a run that was killed, and says so', async () => {
    const { archive, out, run: killed } = await runHoldingLock();
    killed.kill('SIGKILL');
    await new Promise((r) => killed.on('exit', r));
    expect(existsSync(join(out, 'run.lock'))).toBe(true); // SIGKILL leaves it behind
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code).toBe(1);
    expect(r.stdout).toContain(`took over the lock of a run that is gone (${hostname()}, pid ${killed.pid}`);
    expect(r.stdout).toContain(`process ${killed.pid} on this host is no longer running`);
    expect(readJson(join(out, 'run.json')).lock.took_over.holder.pid).toBe(killed.pid);
  });

  // A process killed but not yet collected by its parent (a zombie) still answers signal 0; Linux's /proc gives its state as Z
  // (proc(5), field 3 of /proc/PID/stat). Here a real one: the inner sleep's parent becomes `sleep 30`, which never waits.
  it.runIf(existsSync('/proc/self/stat'))('takes over the lock of a process that ended but was not collected (a zombie)', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    const parent = spawn('sh', ['-c', 'sleep 0.1 & echo $!; exec sleep 30'], { stdio: ['ignore', 'pipe', 'ignore'] });
    try {
      let said = '';
      parent.stdout!.on('data', (d) => { said += d; });
      await until(() => said.includes('\n'), 5000);
      const pid = Number(said.trim());
      const state = () => { try { const st = readFileSync(`/proc/${pid}/stat`, 'utf8'); return st[st.lastIndexOf(')') + 2]; } catch { return null; } };
      await until(() => state() === 'Z', 5000);
      expect(state()).toBe('Z');
      expect(() => process.kill(pid, 0)).not.toThrow(); // the probe alone takes it for running
      const lock = join(out, 'run.lock');
      // The lock as its run wrote it: this host, the pid, and the process named for good (so only its state tells it gone).
      writeFileSync(lock, JSON.stringify({ host: hostname(), pid, started: '2026-12-01T01:00:00.000Z', run_id: 'r-3', command: 'quern reduce /lab/archive', process: procIdentity(pid) }));
      const r = quern('reduce', archive, '--out', out, '--quiet');
      expect(r.code, r.stdout + r.stderr).toBe(1); // the planted truncated recording
      expect(r.stdout).toContain(`took over the lock of a run that is gone (${hostname()}, pid ${pid}, started 2026-12-01T01:00:00.000Z): process ${pid} on this host is no longer running`);
      expect(readJson(join(out, 'run.json')).lock.took_over.holder.pid).toBe(pid);
      // A live process's lock is still refused: the parent runs (state S).
      writeFileSync(lock, JSON.stringify({ host: hostname(), pid: parent.pid, started: '2026-12-01T01:00:00.000Z', run_id: 'r-4', command: 'quern reduce /lab/archive', process: procIdentity(parent.pid!) }));
      const refused = quern('reduce', archive, '--out', out, '--quiet');
      expect(refused.code, refused.stdout + refused.stderr).toBe(2);
      expect(refused.stderr).toContain(`in use by another run: host ${hostname()}, pid ${parent.pid}`);
    } finally {
      parent.kill('SIGKILL'); // the zombie goes to the subreaper or init with it
    }
  });

  // Linux's /proc names a process for good (its boot's id, its start after that boot); elsewhere a live pid keeps its lock.
  it.runIf(existsSync('/proc/self/stat'))('takes over a lock whose pid now names another program: after a restart of the host, or given again', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    const lock = join(out, 'run.lock');
    const me = procIdentity('self');
    const holder = (proc: unknown) => JSON.stringify({ host: hostname(), pid: process.pid, started: '2026-12-01T01:00:00.000Z', run_id: 'r-1', command: 'quern reduce /lab/archive', process: proc });
    const longAgo = new Date('2000-01-01T00:00:00Z'); // before this host's start
    const otherBoot = { ...me, boot: '00000000-0000-4000-8000-000000000000' };
    const cases: [unknown, Date | null, string | null][] = [
      [otherBoot, longAgo, 'this host has restarted since the lock was last refreshed'],
      [{ ...me, start_ticks: me.start_ticks - 1 }, null, `pid ${process.pid} on this host now names another program than the one that took the lock`],
      [me, null, null], // the lock's own process, still running: refused
      [me, longAgo, null], // the same, silent for long: refused, and said to seem stuck
      ['not a process', null, null], // a field that names no process: judged by the pid alone, which runs
    ];
    for (const [proc, refreshed, why] of cases) {
      writeFileSync(lock, holder(proc));
      if (refreshed) utimesSync(lock, refreshed, refreshed);
      const r = quern('reduce', archive, '--out', out, '--quiet');
      if (why) {
        expect(r.code, r.stdout + r.stderr).toBe(1);
        expect(r.stdout).toContain(`took over the lock of a run that is gone (${hostname()}, pid ${process.pid}, started 2026-12-01T01:00:00.000Z): ${why}`);
      } else {
        expect(r.code, r.stdout + r.stderr).toBe(2);
        expect(r.stderr).toContain(`in use by another run: host ${hostname()}, pid ${process.pid}`);
        expect(r.stderr).toMatch(refreshed ? new RegExp(`It has not refreshed the lock for \\d+ min .* seems stuck: end it \\(kill -KILL ${process.pid}\\)`) : /Wait for it to finish \(should it end without removing its lock, the next run takes the lock over\)$/m);
      }
    }
  });

  // A pid counts only on its machine (its boot) and in its pid namespace. A lock from a container on this machine (another
  // pid namespace of this boot, under this host's name or another) is judged by its heartbeat on this machine's clock; one
  // from another machine under this host's name (another boot, refreshed since this host started) as another host's.
  it.runIf(existsSync('/proc/self/ns/pid'))('judges a lock from a container on this machine, or from another machine of the same name, by its heartbeat', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    const lock = join(out, 'run.lock');
    const me = procIdentity('self'), pid = unusedPid();
    const holder = (host: string, proc: unknown) => JSON.stringify({ host, pid, started: '2026-12-01T01:00:00.000Z', run_id: 'r-2', command: 'quern reduce /lab/archive', process: proc });
    const minutesAgo = (m: number) => new Date(Date.now() - m * 60_000);
    const inUse = (host: string, where: string) => `in use by another run: host ${host}, pid ${pid}, started 2026-12-01T01:00:00.000Z (quern reduce /lab/archive, run r-2), ${where} (lock `;

    // Containers on this machine, under this host's name or their own: refused while the heartbeat is fresh or a few
    // minutes late (it may only be slow), taken over once it has been silent for over ten, whatever --stale-lock-after says.
    for (const host of [hostname(), 'nightly-runner-7f3a']) {
      writeFileSync(lock, holder(host, { ...me, pid_namespace: 'pid:[1]' })); // refreshed now
      const refused = quern('reduce', archive, '--out', out, '--quiet');
      expect(refused.code, refused.stdout + refused.stderr).toBe(2);
      expect(refused.stderr).toContain(inUse(host, 'in a container on this machine (another pid namespace)'));
      utimesSync(lock, minutesAgo(3), minutesAgo(3));
      expect(quern('reduce', archive, '--out', out, '--quiet').code).toBe(2);
      utimesSync(lock, minutesAgo(12), minutesAgo(12));
      const taken = quern('reduce', archive, '--out', out, '--quiet');
      expect(taken.code, taken.stdout + taken.stderr).toBe(1);
      expect(taken.stdout).toContain(`took over the lock of a run that is gone (${host}, pid ${pid}, started 2026-12-01T01:00:00.000Z): held in a container on this machine (another pid namespace) and not refreshed for 12 min (over 10 min; its run refreshes it every minute)`);
    }

    // Another machine under this host's name: refused while fresh, then judged by the declared age.
    writeFileSync(lock, holder(hostname(), { ...me, boot: '00000000-0000-4000-8000-000000000000' }));
    const refused = quern('reduce', archive, '--out', out, '--quiet');
    expect(refused.code, refused.stdout + refused.stderr).toBe(2);
    expect(refused.stderr).toContain(inUse(hostname(), "on another machine under this host's name (another boot)"));
    utimesSync(lock, minutesAgo(2), minutesAgo(2)); // after this host started (it has run for longer)
    const taken = quern('reduce', archive, '--out', out, '--quiet', '--stale-lock-after', '1m');
    expect(taken.code, taken.stdout + taken.stderr).toBe(1);
    expect(taken.stdout).toContain(`held from host ${hostname()} on another machine under this host's name (another boot) and not refreshed for`);

    // This machine and pid namespace, under another name (the host was renamed): its pid counts, and is gone.
    writeFileSync(lock, holder('old-name-of-this-host', me));
    const renamed = quern('reduce', archive, '--out', out, '--quiet');
    expect(renamed.code, renamed.stdout + renamed.stderr).toBe(1);
    expect(renamed.stdout).toContain(`process ${pid} on this host is no longer running`);
  });

  it('writes into its lock the process it runs as, where the system names it', async () => {
    const { run, holder: held } = await runHoldingLock();
    const linux = existsSync('/proc/self/stat');
    // Read while the run still holds its lock (the longer archive takes seconds).
    const running = linux ? procIdentity(run.pid!) : null;
    await new Promise((r) => run.on('exit', r));
    if (!linux) return expect(held.process).toBeNull();
    expect(held.process).toEqual(running);
  });

  it('names an output folder the run may not write into, with what to do, rather than failing as quern\'s own error', () => {
    const archive = sampleArchiveCopy();
    // A folder not even root may create files in (/sys), or one without write permission for an ordinary user.
    let out = '/sys';
    if (process.getuid?.() !== 0) { out = join(archive, '..', 'locked'); mkdirSync(out); chmodSync(out, 0o555); }
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code, r.stderr).toBe(2);
    expect(r.stderr).toMatch(new RegExp(`cannot write ${out}/run\\.lock: permission denied \\(EACCES\\); the previous outputs are kept\\. Let the run write there, or give another folder with --out`));
    expect(r.stderr).not.toMatch(/unexpected error/);
  });

  it('takes over a lock from another host only once it is older than the declared age', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    const lock = join(out, 'run.lock');
    writeFileSync(lock, JSON.stringify({ host: 'rig-controller-7', pid: 4242, started: '2026-11-30T01:00:00.000Z', run_id: 'r-1', command: 'quern reduce /lab/archive' }));
    const twoDaysAgo = new Date(Date.now() - 48 * 3_600_000);
    utimesSync(lock, twoDaysAgo, twoDaysAgo);
    const refused = quern('reduce', archive, '--out', out, '--quiet', '--stale-lock-after', '72h');
    expect(refused.code).toBe(2);
    expect(refused.stderr).toContain('in use by another run: host rig-controller-7, pid 4242, started 2026-11-30T01:00:00.000Z');
    expect(refused.stderr).toContain('the lock is taken over once it has not been refreshed for 72 h (--stale-lock-after), or delete the lock file once you know it has ended');
    const taken = quern('reduce', archive, '--out', out, '--quiet');
    expect(taken.code).toBe(1);
    expect(taken.stdout).toMatch(/took over the lock .*rig-controller-7, pid 4242.*held from host rig-controller-7 and not refreshed for 4\d\.\d h \(over 24\.0 h\)/);
  });

  it('takes a lock whose content names no holder for an unreadable one: refused while fresh, taken over after 10 s, never "undefined"', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    const lock = join(out, 'run.lock');
    for (const partial of ['{"host":"x"}', '{"host":"rig-controller-7","pid":"4242","started":"2026-11-30T01:00:00.000Z"}', '[]', 'null']) {
      writeFileSync(lock, partial);
      const refused = quern('reduce', archive, '--out', out, '--quiet');
      expect(refused.code, refused.stdout + refused.stderr).toBe(2);
      expect(refused.stderr).toContain('in use by another run: the lock names no holder yet (a run may be starting; taken over once 10 s old)');
      const aMinuteAgo = new Date(Date.now() - 60_000);
      utimesSync(lock, aMinuteAgo, aMinuteAgo);
      const taken = quern('reduce', archive, '--out', out, '--quiet');
      expect(taken.code, taken.stdout + taken.stderr).toBe(1);
      expect(taken.stdout).toContain('took over the lock of a run that is gone (its holder unreadable): the lock file is empty, unreadable or names no holder, and is over 10 s old');
      for (const r of [refused, taken]) expect(r.stdout + r.stderr).not.toMatch(/undefined|pid 0|\?, /);
    }
  });

  it('names a holder without the command and run id it does not give, never as "undefined"', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet');
    writeFileSync(join(out, 'run.lock'), JSON.stringify({ host: 'rig-controller-7', pid: 4242, started: '2026-11-30T01:00:00.000Z' }));
    const refused = quern('reduce', archive, '--out', out, '--quiet');
    expect(refused.code).toBe(2);
    expect(refused.stderr).toContain('in use by another run: host rig-controller-7, pid 4242, started 2026-11-30T01:00:00.000Z (lock ');
    expect(refused.stderr).not.toContain('undefined');
  });

  it('lets shards of one run work side by side, each under its own lock, and merge waits for running shards', async () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const shard = (k: number) => new Promise<number | null>((resolve) => {
      spawn(process.execPath, [join(repo, 'dist', 'pipeline', 'cli.js'), 'reduce', archive, '--out', out, '--shard', `${k}/2`, '--jobs', '1', '--quiet'], { stdio: 'ignore' }).on('exit', resolve);
    });
    const codes = await Promise.all([shard(1), shard(2)]);
    expect(codes.every((c) => c === 0 || c === 1)).toBe(true);
    writeFileSync(join(out, 'parts', 'run-2-of-2.lock'), JSON.stringify({ host: hostname(), pid: process.pid, started: new Date().toISOString(), run_id: 'r-2', command: 'quern reduce --shard 2/2' }));
    const waiting = quern('merge', out);
    expect(waiting.code).toBe(2);
    expect(waiting.stderr).toContain(`cannot merge while shards are still running: host ${hostname()}, pid ${process.pid}`);
  });
});
