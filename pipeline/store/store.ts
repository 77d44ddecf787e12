// The stored entries of an output folder: one pack per writer (cache/entries.pack for whole runs, cache/entries-K-of-N.pack
// for shard K), so shards never write the same file. Every pack is read; a recording's newest sound record is its entry.
import { mkdir, open, readdir, readFile, rename, rm, stat, type FileHandle } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { writeFileAtomic } from '../outputs/atomic.js';
import { openTemporary } from '../outputs/temporary-file.js';
import { EntryTable, type StoredEntry } from './entry-table.js';
import { RecordReader, RecordsInOrder, scanPack, type Damage, type Located } from './pack.js';
import { lostPast, packCut, type CutPack, type PackCut } from './pack-cut.js';
import { encodeRecord, recordBody, type EntryFacts, type Identity } from './record.js';
import { coverEnd } from '../select/period-gap.js';
import { coverWith, joinCovers, keptCover, readCover, type Cover } from '../select/covered-stretches.js';
import { keptBook, readBook, standingBook, type LateBook } from '../select/pending-late.js';

export const cacheDir = (out: string) => join(out, 'cache');
export const packName = (shard: { k: number; n: number } | null) => (shard ? `entries-${shard.k}-of-${shard.n}.pack` : 'entries.pack');
const PACK = /^entries(-\d+-of-\d+)?\.pack$/;
/** Beside a pack: when the last run that wrote it began its scan (ISO 8601), and what it saw and left out. */
const SCAN_MARK = '.scanned';
const MARK = /^entries(-\d+-of-\d+)?\.pack\.scanned$/;
/** What quern merge's finished merges covered: the stretches of starts their tables held (shards' parts count only once merged). */
const MERGE_COVER = 'merged.covered';
/** The late arrivals no finished run's tables held after the latest merge (pending-late.ts). */
const MERGE_LATE = 'merged.late';

/**
 * What earlier runs saw (`Store.scanMarks`); `latestMs` null: no run said (a new output folder, or cache/ deleted). `cover`:
 * the stretches of starts the finished whole runs and merges put in the tables (null: none said), for the gaps before a period.
 * `late`: the late arrivals no finished run's tables held yet (null: none said).
 */
export interface ScanMarks { latestMs: number | null; leftOut: ReadonlyMap<string, number>; cover: Cover | null; late: LateBook | null }

/** A pack holding more superseded bytes than this, and more than it holds live, is rewritten. */
const COMPACT_AFTER_BYTES = 4 << 20;

/** The pieces as one view when they already lie one after another in one piece of memory (a batch's records do). */
function contiguous(pieces: Uint8Array[]): Buffer | null {
  const first = pieces[0];
  let end = first.byteOffset;
  for (const p of pieces) { if (p.buffer !== first.buffer || p.byteOffset !== end) return null; end += p.byteLength; }
  return Buffer.from(first.buffer, first.byteOffset, end - first.byteOffset);
}

const shaBytes = (hex: string) => Buffer.from(hex, 'hex');

/** The scan mark beside pack `file`, parsed, or null (none, or unreadable). */
const readMark = (file: string): Promise<unknown> => readFile(`${file}${SCAN_MARK}`, 'utf8').then((t) => JSON.parse(t), () => null);

/** The starts a whole run's mark says its finished runs covered (a mark written before that was kept: those before its scan's start). */
const coverOf = (mark: unknown): Cover | null => readCover(mark, (mark as { scan_started?: unknown } | null)?.scan_started);

/**
 * Keeps what a finished merge put in the tables, starts in [fromMs, untilMs) (the parts' latest --since, -Infinity
 * without one, and their earliest end), joined to what earlier merges covered.
 */
export async function keepMergeCover(out: string, fromMs: number, untilMs: number): Promise<void> {
  const file = join(cacheDir(out), MERGE_COVER);
  const before = await readFile(file, 'utf8').then((t) => readCover(JSON.parse(t)), () => null);
  await writeFileAtomic(file, JSON.stringify(keptCover(coverWith(before, fromMs, untilMs))) + '\n');
}

/** Keeps the late arrivals no finished run's tables held once a merge has finished (the merge's own view, `bookAfter`). */
export async function keepMergeLate(out: string, book: LateBook): Promise<void> {
  await writeFileAtomic(join(cacheDir(out), MERGE_LATE), JSON.stringify(keptBook(book)) + '\n');
}

export class Store {
  private fh: FileHandle | null = null;
  private end = 0;
  private constructor(
    readonly out: string,
    /** The pack this run appends to (null: read only). */
    readonly own: string | null,
    /** Every recording's entry, in packed columns. */
    readonly table: EntryTable,
    /** Damaged stretches found while reading. */
    readonly damage: Damage[],
    private sizes: Map<string, number>,
    /** Sound entries each pack holds (superseded ones included), kept in the scan mark with the pack's length. */
    private counts: Map<string, number>,
    /** Packs found shorter than the run that last wrote them left them. */
    private cutPacks: CutPack[],
  ) {}

  /** Reads every pack of the folder; `shard` names the pack this run writes (undefined: none, read only). */
  static async open(out: string, shard?: { k: number; n: number } | null): Promise<Store> {
    const dir = cacheDir(out);
    const files = (await readdir(dir).catch(() => [] as string[])).filter((f) => PACK.test(f)).sort().map((f) => join(dir, f));
    const table = new EntryTable();
    const damage: Damage[] = [];
    const sizes = new Map<string, number>(), counts = new Map<string, number>(), cuts: CutPack[] = [];
    for (const file of files) {
      let count = 0;
      const r = await scanPack(file, (loc) => {
        count++;
        const known = table.rows.get(loc.facts.recording);
        if (known === undefined || loc.facts.storedAt >= table.storedAt(known)) table.set({ ...loc, bodySha: shaBytes(loc.bodySha) }, loc.facts);
      });
      damage.push(...r.damage);
      sizes.set(file, r.size);
      counts.set(file, count);
      const cut = packCut(file, r.size, count, await readMark(file), r.damage.length);
      if (cut) cuts.push(cut);
    }
    // A pack deleted beside its mark is one cut at byte 0: its recordings' results were lost, not never made.
    for (const name of (await readdir(dir).catch(() => [] as string[])).filter((f) => MARK.test(f)).sort()) {
      const file = join(dir, name.slice(0, -SCAN_MARK.length));
      if (files.includes(file)) continue;
      const cut = packCut(file, 0, 0, await readMark(file), 0, true);
      if (cut) cuts.push(cut);
    }
    return new Store(out, shard === undefined ? null : join(dir, packName(shard)), table, damage, sizes, counts, cuts);
  }

  /**
   * What the earlier runs of this output folder saw, from every pack's scan mark (a shard's, or a whole run's, whichever
   * ran before): when the latest began its scan, and the recordings each saw and left without a stored result, with when.
   */
  async scanMarks(): Promise<ScanMarks> {
    const dir = cacheDir(this.out);
    const names = (await readdir(dir).catch(() => [] as string[])).filter((f) => MARK.test(f)).sort();
    let latestMs: number | null = null;
    const leftOut = new Map<string, number>();
    // A shard's part counts once merged: the merge keeps its cover, a whole run its own in its mark.
    let cover = await readFile(join(dir, MERGE_COVER), 'utf8').then((t) => readCover(JSON.parse(t)), () => null);
    const wholeLate: LateBook[] = [], shardLate: LateBook[] = [];
    const merged = await readFile(join(dir, MERGE_LATE), 'utf8').then((t) => readBook(JSON.parse(t)), () => null);
    if (merged) wholeLate.push(merged);
    for (const name of names) {
      const mark = await readFile(join(dir, name), 'utf8').then((t) => JSON.parse(t), () => null);
      const ms = Date.parse(mark?.scan_started);
      // A mark that cannot be read vouches for nothing: its recordings count as new, which costs a look, never a loss.
      if (!Number.isFinite(ms) || !Array.isArray(mark.left_out)) continue;
      latestMs = Math.max(latestMs ?? ms, ms);
      for (const r of mark.left_out) if (typeof r === 'string' && !(leftOut.get(r)! > ms)) leftOut.set(r, ms);
      const whole = name === `${packName(null)}${SCAN_MARK}`;
      if (whole) cover = joinCovers(cover, coverOf(mark));
      const book = readBook(mark);
      if (book) (whole ? wholeLate : shardLate).push(book);
    }
    return { latestMs, leftOut, cover, late: standingBook(wholeLate, shardLate) };
  }

  /**
   * Keeps when this run began its scan and the recordings it saw and left without a stored result, beside its pack,
   * replaced whole; with the pack's length and entry count, by which the next run tells a pack cut short; and the late
   * arrivals no finished run's tables held after it (`late`).
   */
  async markScanned(ms: number, leftOut: readonly string[], since: number | null = null, until: number | null = null, late: LateBook | null = null): Promise<void> {
    if (!this.own) return;
    await mkdir(dirname(this.own), { recursive: true });
    // A whole run's tables cover its period up to its scan; what they covered only grows (a bounded run over an old week takes
    // nothing from the nights before it), and a stretch no run covered stays open. A shard's part counts once merged (keepMergeCover).
    const cover = basename(this.own) === packName(null) ? keptCover(coverWith(await readMark(this.own).then(coverOf), since ?? -Infinity, coverEnd(ms, until))) : {};
    await writeFileAtomic(`${this.own}${SCAN_MARK}`, JSON.stringify({ scan_started: new Date(ms).toISOString(), ...cover, ...(late ? keptBook(late) : {}), left_out: leftOut, ...await this.packEnd() }));
  }

  /** This run's pack's length and sound entries now. */
  private async packEnd(): Promise<{ pack_bytes: number; pack_entries: number }> {
    return { pack_bytes: (await stat(this.own!).catch(() => null))?.size ?? 0, pack_entries: this.counts.get(this.own!) ?? 0 };
  }

  /** The packs found shorter than the run that last wrote them left them. */
  get cutShort(): PackCut[] { return this.cutPacks.map((c) => c.cut); }

  /** The cut pack that held `recording`'s entry, now lost (its file's inode change time `ctimeMs`), if any. */
  lostEntry(recording: string, ctimeMs: number): PackCut | undefined {
    return this.cutPacks.find((c) => lostPast(c, recording, ctimeMs))?.cut;
  }

  /** The recordings that have an entry (keys of recording → row). */
  get entries(): Map<string, number> { return this.table.rows; }

  get(recording: string): StoredEntry | undefined { return this.table.entry(recording); }

  /** A recording's entry's status, without making its facts. */
  statusOf(recording: string): 'reduced' | 'failed' | undefined { return this.table.entry(recording)?.status; }

  /**
   * A recording's start as its stored entry knows it (the header's, else the file's modification time), for selecting a period.
   * A failed entry keeps no start, so its header is read again: a file cut short after a whole header still gives one.
   */
  knownStart(recording: string): { size: number; mtimeMs: number; start_ms: number } | undefined {
    const row = this.table.rows.get(recording);
    if (row === undefined || this.table.failed[row]) return undefined;
    const f = this.table.identityOf(row);
    return { size: f.size, mtimeMs: f.mtimeMs, start_ms: f.startMs ?? f.mtimeMs };
  }

  /** The damage found for a recording whose newest record is unusable, if any. */
  damageOf(recording: string): Damage | undefined {
    this.damageByRecording ??= new Map(this.damage.filter((d) => d.recording).map((d) => [d.recording!, d]));
    return this.damageByRecording.get(recording);
  }
  private damageByRecording: Map<string, Damage> | null = null;

  /** The problems of damaged stretches whose recording could not be told (each problem once). */
  damageOfNone(): string[] {
    return [...new Set(this.damage.filter((d) => !d.recording).map((d) => d.problem))];
  }

  private appending: Promise<void> = Promise.resolve();

  /** Appends records to this run's pack with one write, and makes them the recordings' entries; appends run one at a time. */
  append(records: { facts: EntryFacts; bytes: Uint8Array; tail?: Uint8Array[] }[]): Promise<void> {
    const next = this.appending.then(() => this.appendNow(records));
    this.appending = next.catch(() => {});
    return next;
  }

  private async appendNow(records: { facts: EntryFacts; bytes: Uint8Array; tail?: Uint8Array[] }[]): Promise<void> {
    if (!this.own) throw new Error('this store was opened read-only');
    if (!records.length) return;
    if (!this.fh) {
      await mkdir(cacheDir(this.out), { recursive: true });
      this.fh = await open(this.own, 'a');
      this.end = (await this.fh.stat()).size;
    }
    // A record's tail (a long table's column chunks) is written where it lies, after the record's first bytes.
    const pieces = records.some((r) => r.tail?.length) ? records.flatMap((r) => [r.bytes, ...(r.tail ?? [])]) : [contiguous(records.map((r) => r.bytes)) ?? Buffer.concat(records.map((r) => r.bytes))];
    const total = pieces.reduce((n, p) => n + p.length, 0);
    let offset = this.end;
    // Advance the end before writing: a failed write leaves a cut-off stretch that readers skip and report.
    this.end += total;
    for (const data of pieces) for (let done = 0; done < data.length;) done += (await this.fh.write(data, done, data.length - done)).bytesWritten;
    this.counts.set(this.own, (this.counts.get(this.own) ?? 0) + records.length);
    for (const r of records) {
      const length = r.bytes.length + (r.tail ?? []).reduce((n, p) => n + p.length, 0);
      this.table.set({ file: this.own, offset, length, bodySha: r.bytes.subarray(44, 76) }, r.facts);
      offset += length;
    }
  }

  /**
   * Stores entries again under identity facts confirmed now (same results, copied as they are), so later runs trust the
   * modification time instead of hashing the file. Plain file work: no worker needed.
   */
  async restamp(list: { previous: Located; identity: Identity; readAtMs: number }[]): Promise<void> {
    const reader = new RecordReader();
    try {
      const records = [];
      for (const { previous, identity, readAtMs } of list) {
        const facts: EntryFacts = { ...previous.facts, identity, readAtMs, storedAt: Date.now() };
        records.push({ facts, bytes: encodeRecord(facts, recordBody(reader.read(previous, facts.recording))) });
      }
      await this.append(records);
    } finally {
      reader.close();
    }
  }

  async close(): Promise<void> {
    await this.fh?.close();
    this.fh = null;
  }

  /**
   * Rewrites this run's pack with only its live records when it holds damage, or more superseded bytes than live ones:
   * under a new name, then renamed, so a run stopped meanwhile keeps the old pack. Given the recordings in the archive now,
   * the entries of those gone from it count as superseded and are dropped with them (null: every entry is kept).
   */
  async compact(present: { has(recording: string): boolean } | null = null): Promise<boolean> {
    if (!this.own) return false;
    await this.close();
    const own = this.own;
    const live = [...this.table.rows].map(([recording, row]) => ({ recording, at: this.table.at(row) })).filter((l) => l.at.file === own && (!present || present.has(l.recording))).sort((a, b) => a.at.offset - b.at.offset);
    const liveBytes = live.reduce((s, l) => s + l.at.length, 0);
    const size = Math.max(this.end, this.sizes.get(own) ?? 0);
    const damaged = this.damage.some((d) => d.file === own);
    if (!damaged && !(size - liveBytes > COMPACT_AFTER_BYTES && size - liveBytes > liveBytes)) return false;
    const tmp = join(cacheDir(this.out), `.${basename(own)}.${process.pid}.tmp`);
    // The live records in the order they lie, through one window (reads that wait rather than block: see RecordsInOrder).
    const src = new RecordsInOrder(), dst = await openTemporary(tmp);
    try {
      let offset = 0;
      const moved: number[] = [];
      for (const l of live) {
        moved.push(offset);
        // A long recording's record goes through a window at a time, checked once it is through.
        await src.copy(l.at, l.recording, async (bytes) => { await dst.write(bytes, 0, bytes.length, offset); offset += bytes.length; });
      }
      await dst.sync();
      await dst.close();
      await rename(tmp, own);
      live.forEach((l, i) => { this.table.offset[l.at.row] = moved[i]; });
      // The entries left behind lie nowhere now.
      const kept = new Set(live.map((l) => l.recording));
      for (const [recording, row] of this.table.rows) if (this.table.at(row).file === own && !kept.has(recording)) this.table.rows.delete(recording);
      this.end = offset;
      this.counts.set(own, live.length);
      // The mark keeps the shorter length at once: a run stopped before it writes its own mark leaves no false cut behind.
      const mark = await readFile(`${own}${SCAN_MARK}`, 'utf8').then((t) => JSON.parse(t), () => null);
      if (mark) await writeFileAtomic(`${own}${SCAN_MARK}`, JSON.stringify({ ...mark, ...await this.packEnd() }));
      return true;
    } catch (e) {
      await dst.close().catch(() => {});
      await rm(tmp, { force: true });
      throw e;
    } finally {
      await src.close();
    }
  }
}
