// Outputs are staged under hidden temporary names and put in place together by renaming, so a run that fails while
// writing (a full disk, a file-size limit) leaves the previous outputs whole, and says which file failed and why.
import { randomBytes } from 'node:crypto';
import { lstat, open, rename, rm, type FileHandle } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { openTemporary } from './temporary-file.js';

const CAUSES: Record<string, string> = {
  ENOSPC: 'no space left on the device', EFBIG: 'file too large (a file-size limit was reached)', EDQUOT: 'disk quota exceeded',
  EACCES: 'permission denied', EPERM: 'operation not permitted', EROFS: 'read-only file system', EIO: 'input/output error',
  EISDIR: 'a folder stands where the file must go',
};

/** Causes that no amount of free space mends. */
const FORBIDDEN = new Set(['EACCES', 'EPERM', 'EROFS']);

/** A write that failed, naming the file and the cause; the run ends with exit code 2. */
export class WriteFailed extends Error {
  /** The cause in words, with the system's code. */
  readonly what: string;
  /** Whether the place refuses writing (no amount of free space mends it). */
  readonly forbidden: boolean;
  /** The system's code of the cause (ENOSPC, EROFS…), when it gave one. */
  readonly code: string | undefined;
  private readonly todo: string;
  /** The message with where the outputs stand in `outputs`' words, for a write that failed once the run had begun to put them in place. */
  standing(outputs: string): string { return `cannot write ${this.file}: ${this.what}; ${outputs}. ${this.todo}`; }
  constructor(readonly file: string, readonly reason: unknown) {
    const cause = reason;
    const code = (cause as NodeJS.ErrnoException)?.code;
    const what = code && CAUSES[code] ? `${CAUSES[code]} (${code})` : (cause as Error)?.message ?? String(cause);
    const forbidden = code != null && FORBIDDEN.has(code);
    const todo = `${forbidden ? 'Let the run write there, or give another folder with --out' : code === 'EISDIR' ? 'Move that folder away' : 'Free space or raise the limit'}, then run again`;
    super(`cannot write ${file}: ${what}; the previous outputs are kept. ${todo}`);
    this.todo = todo;
    this.what = what;
    this.forbidden = forbidden;
    this.code = code;
  }
}

/** Runs `write`, turning any failure into a WriteFailed that names `file`. */
export async function writing<T>(file: string, write: () => Promise<T>): Promise<T> {
  try { return await write(); } catch (e) { throw e instanceof WriteFailed ? e : new WriteFailed(file, e); }
}

/** Bytes gathered before a write: one buffer a file, reused, so that the pieces given are copied once and can be freed at once. */
const FLUSH_BYTES = 256 << 10;

/** A file written in appended pieces under a temporary name, until `commit` renames it into place. */
export class StagedFile {
  readonly tmp: string;
  private fh: FileHandle | null = null;
  private pending: Buffer | null = null;
  private pendingBytes = 0;
  private pos = 0;
  constructor(readonly path: string) {
    this.tmp = join(dirname(path), `.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
  }

  /** Copies the piece (the caller may free its memory as soon as this returns); writes when enough has gathered. */
  async write(data: string | Uint8Array): Promise<void> {
    const b = typeof data === 'string' ? Buffer.from(data) : data;
    if (this.pendingBytes + b.length > FLUSH_BYTES) await this.flush();
    if (b.length >= FLUSH_BYTES) { await this.out(b); return; }
    (this.pending ??= Buffer.allocUnsafe(FLUSH_BYTES)).set(b, this.pendingBytes);
    this.pendingBytes += b.length;
  }

  private async flush(): Promise<void> {
    // Opens the file even with nothing gathered: an empty output is still a file.
    await this.out(this.pending ? this.pending.subarray(0, this.pendingBytes) : new Uint8Array(0));
    this.pendingBytes = 0;
  }

  private async out(data: Uint8Array): Promise<void> {
    await writing(this.path, async () => {
      this.fh ??= await openTemporary(this.tmp);
      for (let done = 0; done < data.length;) done += (await this.fh.write(data, done, data.length - done, this.pos + done)).bytesWritten;
      this.pos += data.length;
    });
  }

  /** Writes what is pending and (for an output, not a scratch file) flushes it to the disk. */
  async close({ durable = true } = {}): Promise<void> {
    await this.flush();
    this.pending = null;
    await writing(this.path, async () => { if (durable) await this.fh!.sync(); await this.fh!.close(); this.fh = null; });
  }

  get size(): number { return this.pos + this.pendingBytes; }

  async commit(): Promise<void> { await writing(this.path, () => rename(this.tmp, this.path)); }

  async discard(): Promise<void> {
    await this.fh?.close().catch(() => {});
    this.fh = null;
    await rm(this.tmp, { force: true });
  }
}

/** Puts staged files in place (renames, which need no space) and makes the renames durable. */
export async function commitAll(files: StagedFile[]): Promise<void> {
  // A folder where a file must go would fail its rename after the files before it were in place: found before any rename.
  for (const f of files) if ((await lstat(f.path).catch(() => null))?.isDirectory()) throw new WriteFailed(f.path, Object.assign(new Error('a folder'), { code: 'EISDIR' }));
  for (const f of files) await f.commit();
  for (const dir of new Set(files.map((f) => dirname(f.path)))) {
    const fh = await open(dir, 'r');
    try { await fh.sync(); } catch { /* some file systems refuse fsync on folders */ } finally { await fh.close(); }
  }
}

/** A JSON object written in pieces around one long list: the fields before it, then each item, then the fields after it. */
export const jsonPieces = {
  head: (before: object, key: string) => { const h = JSON.stringify(before, null, 2); return `${h.slice(0, -2)}${h.length > 2 ? ',' : ''}\n  ${JSON.stringify(key)}: [`; },
  item: (text: string, index: number) => `${index ? ',' : ''}\n    ${text.replace(/\n/g, '\n    ')}`,
  tail: (items: number, after: object) => `${items ? '\n  ' : ''}]${Object.entries(after).map(([k, v]) => `,\n  ${JSON.stringify(k)}: ${JSON.stringify(v, null, 2).split('\n').join('\n  ')}`).join('')}\n}\n`,
};
