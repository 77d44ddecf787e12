// A pack: stored entries appended one after another in one file (see record.ts), read back in one sequential pass.
// A damaged stretch (bad checksum, lying length, cut-off end) is reported and skipped: reading resumes at the next sound record.
import { closeSync, openSync, readSync } from 'node:fs';
import { open, type FileHandle } from 'node:fs/promises';
import { createHash } from 'node:crypto';
import { columnsAt, decodeResults, HEADER_BYTES, MAGIC, MAX_PART_BYTES, sha256, type EntryFacts } from './record.js';

/** Where a record lies, and the checksum of its results: enough to read it back and check it. */
export interface Place { file: string; offset: number; length: number; bodySha: string }

/** Where a sound record lies, and its facts. */
export interface Located extends Place { facts: EntryFacts }

/** A stretch of a pack that is not a sound record. */
export interface Damage { file: string; offset: number; length: number; recording: string | null; problem: string }

const WINDOW = 8 << 20;
const MAGIC_BYTES = Buffer.from([0x51, 0x52, 0x4e, 0x31]);

/** Reads a file through one sliding window, so a pack of any size is read in bounded memory. */
class Window {
  private buf = Buffer.alloc(0);
  private start = 0;
  constructor(private fh: FileHandle, readonly size: number) {}
  /** The bytes [pos, pos + n), or null past the end of the file. */
  async at(pos: number, n: number): Promise<Buffer | null> {
    if (pos + n > this.size) return null;
    if (pos < this.start || pos + n > this.start + this.buf.length) {
      const length = Math.min(Math.max(n, WINDOW), this.size - pos);
      this.buf = Buffer.allocUnsafe(length);
      const { bytesRead } = await this.fh.read(this.buf, 0, length, pos);
      if (bytesRead < n) return null;
      this.buf = this.buf.subarray(0, bytesRead);
      this.start = pos;
    }
    return this.buf.subarray(pos - this.start, pos - this.start + n);
  }
}

/** The SHA-256 of [pos, pos + n), read a window at a time: a long recording's entry is never held whole to be checked. */
async function shaOf(w: Window, pos: number, n: number): Promise<Buffer | null> {
  const hash = createHash('sha256');
  for (let done = 0; done < n;) {
    const piece = await w.at(pos + done, Math.min(WINDOW, n - done));
    if (!piece) return null;
    hash.update(piece);
    done += piece.length;
  }
  return hash.digest();
}

type Check = { ok: true; located: Located } | { ok: false; problem: string; recording: string | null };

/** Holds the record starting at `pos` against its header and checksums. */
async function check(file: string, w: Window, pos: number): Promise<Check> {
  const head = await w.at(pos, HEADER_BYTES);
  if (!head) return { ok: false, problem: 'truncated: the file ends inside a record header', recording: null };
  if (head.readUInt32LE(0) !== MAGIC) return { ok: false, problem: 'not the start of a record (damaged bytes)', recording: null };
  const metaLength = head.readUInt32LE(4), bodyLength = head.readUInt32LE(8);
  if (metaLength > MAX_PART_BYTES || bodyLength > MAX_PART_BYTES) return { ok: false, problem: 'damaged header (impossible lengths)', recording: null };
  const length = HEADER_BYTES + metaLength + bodyLength;
  const metaSha = Buffer.from(head.subarray(12, 44)), bodySha = Buffer.from(head.subarray(44, 76));
  const meta = await w.at(pos + HEADER_BYTES, metaLength);
  if (!meta) return { ok: false, problem: 'truncated: the file ends inside a record', recording: null };
  let facts: EntryFacts | null = null;
  if (sha256(meta).equals(metaSha)) { try { facts = JSON.parse(meta.toString('utf8')) as EntryFacts; } catch { facts = null; } }
  if (pos + length > w.size) return { ok: false, problem: 'truncated: the file ends inside a record', recording: facts?.recording ?? null };
  if (!facts) return { ok: false, problem: 'checksum mismatch in the entry\'s facts', recording: null };
  const sum = await shaOf(w, pos + HEADER_BYTES + metaLength, bodyLength);
  if (!sum || !sum.equals(bodySha)) return { ok: false, problem: 'checksum mismatch in the entry\'s results', recording: facts.recording };
  return { ok: true, located: { file, offset: pos, length, bodySha: bodySha.toString('hex'), facts } };
}

/**
 * The recording a damaged record at the start of [pos, end) held, when one of its parts still matches its checksum: the
 * facts or the results, found where the header's lengths put them or, a length being damaged, where the stretch's end
 * puts them with the other. Null when neither part can be trusted: a name read from damaged bytes could be another's.
 */
async function recordingIn(w: Window, pos: number, end: number): Promise<string | null> {
  const head = await w.at(pos, HEADER_BYTES);
  if (!head) return null;
  const metaLength = head.readUInt32LE(4), bodyLength = head.readUInt32LE(8), parts = end - pos - HEADER_BYTES;
  const metaSha = head.subarray(12, 44), bodySha = head.subarray(44, 76);
  const sound = (n: number) => n >= 0 && n <= MAX_PART_BYTES && n <= parts;
  for (const m of new Set([metaLength, parts - bodyLength])) {
    if (!sound(m) || m === 0) continue;
    const meta = await w.at(pos + HEADER_BYTES, m);
    if (meta && sha256(meta).equals(metaSha)) {
      try { return (JSON.parse(meta.toString('utf8')) as EntryFacts).recording ?? null; } catch { /* not the facts after all */ }
    }
  }
  for (const m of new Set([metaLength, parts - bodyLength])) {
    for (const b of new Set([bodyLength, parts - m])) {
      if (!sound(m) || !sound(b) || m + b > parts || b === 0) continue;
      const body = await w.at(pos + HEADER_BYTES + m, b);
      if (!body || !sha256(body).equals(bodySha)) continue;
      try { return decodeResults(body).recording ?? null; } catch { /* matched, yet not results */ }
    }
  }
  return null;
}

/** The next position after `from` where a sound record starts, or the end of the file. */
async function resync(file: string, w: Window, from: number): Promise<number> {
  for (let pos = from; pos < w.size;) {
    const span = await w.at(pos, Math.min(WINDOW / 2, w.size - pos));
    const hit = span ? span.indexOf(MAGIC_BYTES) : -1;
    if (hit < 0) { pos += Math.max(1, (span?.length ?? 4) - 3); continue; }
    if ((await check(file, w, pos + hit)).ok) return pos + hit;
    pos += hit + 1;
  }
  return w.size;
}

/**
 * Where the damaged records of the stretch [pos, next) start: `pos`, and every later record header whose own length chains
 * to `next` through headers that do too (a header's length read as it stands: damaged ones rarely chain exactly). So
 * adjacent damaged entries count one each, while bytes that start no record stay in the stretch before them.
 */
async function damagedStarts(w: Window, pos: number, next: number): Promise<number[]> {
  const heads: number[] = [];
  for (let at = pos + 1; at < next;) {
    const span = await w.at(at, Math.min(WINDOW / 2, next - at));
    if (!span) break;
    let hit = span.indexOf(MAGIC_BYTES);
    while (hit >= 0 && at + hit + 4 <= next) { heads.push(at + hit); hit = span.indexOf(MAGIC_BYTES, hit + 1); }
    at += Math.max(1, span.length - 3);
  }
  const starts = new Set([next]);
  for (const h of [...new Set(heads)].sort((a, b) => b - a)) {
    const head = await w.at(h, HEADER_BYTES);
    if (head && starts.has(h + HEADER_BYTES + head.readUInt32LE(4) + head.readUInt32LE(8))) starts.add(h);
  }
  starts.delete(next);
  return [pos, ...[...starts].sort((a, b) => a - b)];
}

/** Every sound record of a pack in file order, and every damaged stretch (one an entry); a missing pack has neither. */
export async function scanPack(file: string, onRecord: (r: Located) => void): Promise<{ damage: Damage[]; size: number }> {
  let fh: FileHandle;
  try { fh = await open(file, 'r'); } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT') return { damage: [], size: 0 };
    return { damage: [{ file, offset: 0, length: 0, recording: null, problem: `unreadable: ${(e as Error).message}` }], size: 0 };
  }
  const damage: Damage[] = [];
  try {
    const w = new Window(fh, (await fh.stat()).size);
    for (let pos = 0; pos < w.size;) {
      const c = await check(file, w, pos);
      if (c.ok) { onRecord(c.located); pos += c.located.length; continue; }
      const next = await resync(file, w, pos + 1);
      const starts = await damagedStarts(w, pos, next);
      for (const [i, at] of starts.entries()) {
        const end = starts[i + 1] ?? next;
        const d = i === 0 ? c : await check(file, w, at);
        const problem = d.ok ? 'damaged' : d.problem, recording = d.ok ? null : d.recording;
        damage.push({ file, offset: at, length: end - at, recording: recording ?? await recordingIn(w, at, end), problem });
      }
      pos = next;
    }
    return { damage, size: w.size };
  } catch (e) {
    damage.push({ file, offset: 0, length: 0, recording: null, problem: `unreadable: ${(e as Error).message}` });
    return { damage, size: 0 };
  } finally {
    await fh.close();
  }
}

/** The bytes of one located record, checked again against its checksums (a pack may have been damaged since it was scanned). */
function checked(bytes: Buffer, bytesRead: number, loc: Place, recording: string): Buffer {
  const metaLength = bytesRead >= HEADER_BYTES ? bytes.readUInt32LE(4) : 0;
  const body = bytes.subarray(HEADER_BYTES + metaLength);
  if (bytesRead < loc.length || bytes.readUInt32LE(0) !== MAGIC || sha256(body).toString('hex') !== loc.bodySha) {
    throw new Error(`${loc.file}: the stored entry of ${recording} at byte ${loc.offset} was damaged after it was read; run again to recompute it`);
  }
  return bytes;
}

/**
 * Records read in the order they lie in their packs (places sorted by pack and offset), through one reused 8 MB window: a
 * pass over every entry reads each pack front to back in a few large reads, not one read a record (for 20,000 entries the
 * single reads took a quarter of the trends' pass over the history). A record's bytes are a view of the window, valid
 * until the next read; each is checked against its checksums. The reads wait off the main thread (one wait a window, not a
 * record), so the storage watch's timer still runs while a hung output folder holds one.
 */
export class RecordsInOrder {
  /** `tables` false: a record's packed table columns are checked but not kept (its results then decode with `tables` false). */
  constructor(private readonly windowBytes = WINDOW, readonly tables = true) {}
  private fh: FileHandle | null = null;
  private file = '';
  private window = Buffer.alloc(0);
  private start = 0;
  private filled = 0;
  async read(loc: Place, recording: string): Promise<Buffer> {
    if (loc.file !== this.file) {
      await this.close();
      this.fh = await open(loc.file, 'r');
      this.file = loc.file;
    }
    if (!this.tables && loc.length > this.windowBytes) return this.withoutColumns(loc, recording);
    if (loc.offset < this.start || loc.offset + loc.length > this.start + this.filled) {
      const want = Math.max(loc.length, this.windowBytes);
      if (this.window.length < want) this.window = Buffer.allocUnsafe(want);
      let got = 0;
      for (let n = 1; got < want && n > 0; got += n) n = (await this.fh!.read(this.window, got, want - got, loc.offset + got)).bytesRead;
      this.start = loc.offset;
      this.filled = got;
    }
    const at = loc.offset - this.start;
    return checked(this.window.subarray(at, at + loc.length), Math.min(loc.length, this.filled - at), loc, recording);
  }
  /**
   * Hands a record's bytes to `write` in order, a window at a time when it is larger than the window (a long recording's
   * table columns), and checks them against its checksums once all are through: a record is copied without being held whole.
   */
  async copy(loc: Place, recording: string, write: (bytes: Buffer) => Promise<void>): Promise<void> {
    if (loc.length <= this.windowBytes) { await write(await this.read(loc, recording)); return; }
    if (loc.file !== this.file) { await this.close(); this.fh = await open(loc.file, 'r'); this.file = loc.file; }
    if (this.window.length < this.windowBytes) this.window = Buffer.allocUnsafe(this.windowBytes);
    this.start = 0; this.filled = 0;
    const damaged = () => new Error(`${loc.file}: the stored entry of ${recording} at byte ${loc.offset} was damaged after it was read; run again to recompute it`);
    let hash: ReturnType<typeof createHash> | null = null, bodyStart = 0;
    for (let done = 0; done < loc.length;) {
      let n = 0;
      for (let k = 1; n < Math.min(this.windowBytes, loc.length - done) && k > 0; n += k) k = (await this.fh!.read(this.window, n, Math.min(this.windowBytes, loc.length - done) - n, loc.offset + done + n)).bytesRead;
      if (n === 0) throw damaged();
      const piece = this.window.subarray(0, n);
      if (!hash) {
        if (n < HEADER_BYTES || piece.readUInt32LE(0) !== MAGIC) throw damaged();
        bodyStart = HEADER_BYTES + piece.readUInt32LE(4);
        hash = createHash('sha256');
      }
      if (done + n > bodyStart) hash.update(piece.subarray(Math.max(0, bodyStart - done)));
      await write(piece);
      done += n;
    }
    if (hash!.digest('hex') !== loc.bodySha) throw damaged();
  }

  /**
   * A record larger than the window, cut where its table columns start; the columns are read a window at a time into the
   * checksum and dropped, so a long recording's windows rows never sit in memory for the trends.
   */
  private async withoutColumns(loc: Place, recording: string): Promise<Buffer> {
    const readAt = async (to: Buffer, from: number, n: number) => {
      let got = 0;
      for (let k = 1; got < n && k > 0; got += k) k = (await this.fh!.read(to, got, n - got, from + got)).bytesRead;
      return got;
    };
    const head = Buffer.allocUnsafe(HEADER_BYTES + 10);
    const damaged = () => new Error(`${loc.file}: the stored entry of ${recording} at byte ${loc.offset} was damaged after it was read; run again to recompute it`);
    if (await readAt(head, loc.offset, HEADER_BYTES) < HEADER_BYTES || head.readUInt32LE(0) !== MAGIC) throw damaged();
    const bodyStart = HEADER_BYTES + head.readUInt32LE(4);
    if (bodyStart + 10 > loc.length) throw damaged();
    await readAt(head.subarray(HEADER_BYTES), loc.offset + bodyStart, 10);
    const at = columnsAt(head.subarray(HEADER_BYTES));
    const cut = at === null ? loc.length : Math.min(loc.length, bodyStart + at);
    const bytes = Buffer.allocUnsafe(cut);
    if (await readAt(bytes, loc.offset, cut) < cut) throw damaged();
    const hash = createHash('sha256').update(bytes.subarray(bodyStart));
    if (this.window.length < this.windowBytes) this.window = Buffer.allocUnsafe(this.windowBytes);
    for (let done = cut; done < loc.length;) {
      const n = await readAt(this.window, loc.offset + done, Math.min(this.windowBytes, loc.length - done));
      if (n === 0) throw damaged();
      hash.update(this.window.subarray(0, n));
      done += n;
    }
    // The window now holds column bytes, not the records after this one.
    this.start = 0; this.filled = 0;
    if (hash.digest('hex') !== loc.bodySha) throw damaged();
    return bytes;
  }

  async close(): Promise<void> {
    const fh = this.fh;
    this.fh = null;
    this.file = '';
    this.start = 0;
    this.filled = 0;
    await fh?.close();
  }
}

/**
 * Records read one after another where nothing else waits on the thread (a worker, a pass over the history): one
 * descriptor a pack, each record in one blocking positioned read, checked against its checksums.
 */
export class RecordReader {
  private fds = new Map<string, number>();
  read(loc: Place, recording: string): Buffer {
    const fd = this.fds.get(loc.file) ?? this.fds.set(loc.file, openSync(loc.file, 'r')).get(loc.file)!;
    const bytes = Buffer.allocUnsafe(loc.length);
    let got = 0;
    for (let n = 1; got < loc.length && n > 0; got += n) n = readSync(fd, bytes, got, loc.length - got, loc.offset + got);
    return checked(bytes, got, loc, recording);
  }
  /**
   * A record cut where its packed table columns start (`columnsAt`), with the offset of its results in the pack; the
   * columns are read into the checksum a window at a time and dropped, so the outputs read them a record batch at a time.
   */
  readWithoutColumns(loc: Place, recording: string): { bytes: Buffer; bodyAt: number } {
    const fd = this.fds.get(loc.file) ?? this.fds.set(loc.file, openSync(loc.file, 'r')).get(loc.file)!;
    const readAt = (to: Buffer, from: number) => {
      let got = 0;
      for (let k = 1; got < to.length && k > 0; got += k) k = readSync(fd, to, got, to.length - got, from + got);
      return got;
    };
    const damaged = () => new Error(`${loc.file}: the stored entry of ${recording} at byte ${loc.offset} was damaged after it was read; run again to recompute it`);
    const head = Buffer.allocUnsafe(HEADER_BYTES + 10);
    if (readAt(head.subarray(0, HEADER_BYTES), loc.offset) < HEADER_BYTES || head.readUInt32LE(0) !== MAGIC) throw damaged();
    const bodyStart = HEADER_BYTES + head.readUInt32LE(4);
    if (bodyStart + 10 > loc.length) throw damaged();
    readAt(head.subarray(HEADER_BYTES), loc.offset + bodyStart);
    const at = columnsAt(head.subarray(HEADER_BYTES));
    const cut = at === null ? loc.length : Math.min(loc.length, bodyStart + at);
    const bytes = Buffer.allocUnsafe(cut);
    if (readAt(bytes, loc.offset) < cut) throw damaged();
    const hash = createHash('sha256').update(bytes.subarray(bodyStart));
    const piece = Buffer.allocUnsafe(Math.min(WINDOW, loc.length - cut));
    for (let done = cut; done < loc.length;) {
      const n = readAt(piece.subarray(0, Math.min(piece.length, loc.length - done)), loc.offset + done);
      if (n === 0) throw damaged();
      hash.update(piece.subarray(0, n));
      done += n;
    }
    if (hash.digest('hex') !== loc.bodySha) throw damaged();
    return { bytes, bodyAt: loc.offset + bodyStart };
  }

  close(): void {
    for (const fd of this.fds.values()) closeSync(fd);
    this.fds.clear();
  }
}
