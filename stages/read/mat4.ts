// Level 4 MAT-files (MATLAB 4's format, which loggers and other tools still write; MathWorks, "MAT-File Format", Level 4
// MAT-Files; the field layout from memory): one matrix after another, each a header of five 32-bit integers (type MOPT,
// rows, columns, imaginary flag, name length), its name closed by a NUL, then its real values column by column (then the
// imaginary ones). Of MOPT's digits, M is the number format (0 IEEE little-endian, 1 IEEE big-endian; 2 to 4 VAX and Cray,
// refused), O is 0, P the stored type (0 double, 1 single, 2 int32, 3 int16, 4 uint16, 5 uint8) and T the kind (0 numeric,
// 1 text, 2 sparse). MATLAB reads every matrix as a double, whatever its stored type, so values are kept as stored.
import { open } from 'node:fs/promises';
import { storedCursor } from './mat-bytes.js';
import { charCodesText, charMatrixRows, heldText, isVectorDims, MI, MX, TYPE_BYTES, type ArrayHeader } from './mat-element.js';
import type { ChannelSource, MatVariables } from './mat-file.js';
import { decodeInto } from './mat-values.js';
import { rateFrom, startFrom } from './setting-values.js';
import { RecordingError } from './recording.js';

/** The stored types P names, as the level 5 data types the decoder reads. */
const STORED: number[] = [MI.DOUBLE, MI.SINGLE, MI.INT32, MI.INT16, MI.UINT16, MI.UINT8];
/** Longest name read: MATLAB's are at most 63 characters; anything far longer is a damaged count. */
const MAX_NAME_BYTES = 4096;
/** Most bytes of a value or of names read whole (a setting, not samples). */
const MAX_VALUE_BYTES = 1 << 20;

interface Matrix { name: string; at: number; type: number; kind: number; rows: number; columns: number; complex: boolean; data: number }

/** MOPT's digits, or null where they are not a level 4 type. */
function digits(mopt: number): { m: number; p: number; t: number } | null {
  if (!Number.isInteger(mopt) || mopt < 0 || mopt > 4999) return null;
  const m = Math.floor(mopt / 1000), o = Math.floor(mopt / 100) % 10, p = Math.floor(mopt / 10) % 10, t = mopt % 10;
  return o === 0 && p <= 5 && t <= 2 ? { m, p, t } : null;
}

/** The byte order a level 4 header at the start of `head` is written in (its number format says it), or null where it is no such header. */
function orderOf(head: Buffer): boolean | null {
  if (head.length < 20) return null;
  for (const little of [true, false]) {
    const int = (i: number) => (little ? head.readInt32LE(4 * i) : head.readInt32BE(4 * i));
    const d = digits(int(0));
    if (d && d.m === (little ? 0 : 1) && int(1) >= 0 && int(2) >= 0 && (int(3) === 0 || int(3) === 1) && int(4) >= 1 && int(4) <= MAX_NAME_BYTES) return little;
  }
  return null;
}

/** Whether the file opens with a level 4 matrix header (a level 5 file opens with 116 bytes of text). */
export async function isMat4(path: string): Promise<boolean> {
  const f = await open(path, 'r');
  try {
    const head = Buffer.alloc(20);
    const { bytesRead } = await f.read(head, 0, 20, 0);
    return orderOf(head.subarray(0, bytesRead)) !== null;
  } finally { await f.close(); }
}

export async function readMat4File(path: string): Promise<MatVariables> {
  const file = await open(path, 'r');
  const matrices: Matrix[] = [];
  let little = true;
  try {
    const size = (await file.stat()).size;
    const head = Buffer.alloc(20);
    for (let at = 0; at < size;) {
      const { bytesRead } = await file.read(head, 0, 20, at);
      if (bytesRead < 20) throw new RecordingError(`byte ${at}: a matrix header cut short by the end of the file; the file is cut short: copy it again`);
      const order = orderOf(head);
      if (at === 0) little = order ?? true;
      if (order !== little) throw new RecordingError(`byte ${at}: no level 4 matrix header (type ${head.readInt32LE(0)}), where the one before ends; the file is damaged: copy it again`);
      const int = (i: number) => (little ? head.readInt32LE(4 * i) : head.readInt32BE(4 * i));
      const { p, t } = digits(int(0))!;
      const [rows, columns, complex, nameBytes] = [int(1), int(2), int(3) === 1, int(4)];
      const name = Buffer.alloc(nameBytes);
      if ((await file.read(name, 0, nameBytes, at + 20)).bytesRead < nameBytes) throw new RecordingError(`byte ${at + 20}: a matrix name cut short by the end of the file; copy the file again`);
      const data = at + 20 + nameBytes, bytes = rows * columns * TYPE_BYTES[STORED[p]] * (complex ? 2 : 1);
      if (data + bytes > size) throw new RecordingError(`byte ${at}: matrix "${name.toString('latin1').replace(/\0.*$/s, '')}" (${rows} × ${columns}) runs past the end of the file (${size} bytes); the file is cut short: copy it again`);
      matrices.push({ name: name.toString('latin1').replace(/\0.*$/s, ''), at, type: STORED[p], kind: t, rows, columns, complex, data });
      at = data + bytes;
    }
  } catch (e) {
    await file.close();
    throw e;
  }

  const holds = () => heldText(matrices, (m) => `${m.name} (${['double', 'text', 'sparse'][m.kind]} ${m.rows} × ${m.columns})`, 'no matrices');
  const find = (path: string, what: string, where: string) => {
    if (path.includes('.')) throw new RecordingError(`variable "${path}" (the ${what}): a level 4 MAT-file holds no structs, only matrices; ${holds()}; correct ${where}`);
    const m = matrices.find((x) => x.name === path);
    if (!m) throw new RecordingError(`variable "${path}" (the ${what}) is not in the file; ${holds()}; correct ${where} or check the file`);
    return { m, place: `variable "${path}" (byte ${m.at}, level 4)` };
  };
  const refuseKind = (m: Matrix, place: string, what: string) => {
    if (m.kind === 2) throw new RecordingError(`${place} is a sparse matrix; save the ${what} as a full one (full(x))`);
    if (m.complex) throw new RecordingError(`${place} holds complex values; save the real part (real(x)) as the ${what}`);
  };
  /** A matrix's values whole, as numbers (a setting: its size is bounded). */
  const valuesOf = async (m: Matrix, place: string): Promise<Float64Array> => {
    const count = m.rows * m.columns, bytes = count * TYPE_BYTES[m.type];
    if (bytes > MAX_VALUE_BYTES) throw new RecordingError(`${place} holds ${m.rows} × ${m.columns} values, more than a setting has`);
    const raw = new Uint8Array(new ArrayBuffer(bytes));
    await file.read(raw, 0, bytes, m.data);
    const out = new Float64Array(count);
    decodeInto(raw, m.type, little, count, out, 0, 1, { scale: 1, shift: 0 });
    return out;
  };
  /** One number, or one line of text (character codes stored as numbers). */
  const valueOf = async (path: string, what: string, where: string): Promise<number | string> => {
    const { m, place } = find(path, what, where);
    refuseKind(m, place, what);
    if (m.kind === 1) {
      if (!isVectorDims([m.rows, m.columns])) throw new RecordingError(`${place} is a ${m.rows} × ${m.columns} text matrix; the ${what} is one line of text or one number`);
      return charCodesText(await valuesOf(m, place)).trim();
    }
    if (m.rows * m.columns !== 1) throw new RecordingError(`${place} holds ${m.rows} × ${m.columns} values; the ${what} is one number; correct ${where}`);
    return (await valuesOf(m, place))[0];
  };

  return {
    little,
    holds,
    async sourceAt(path, what, where, first) {
      const { m, place } = find(path, what, where);
      refuseKind(m, place, what);
      if (m.kind === 1) throw new RecordingError(`${place} is a text matrix; the ${what} must be numbers`);
      const size = TYPE_BYTES[m.type], count = m.rows * m.columns;
      const header: ArrayHeader = { cls: MX.DOUBLE, complex: false, logical: false, dims: [m.rows, m.columns], name: m.name, count };
      const cursor = storedCursor(file, m.data + first * size, (count - first) * size, place);
      return { cursor, type: m.type, inline: null, width: 1, header, where: place };
    },
    sampleRateOf: async (path, where) => rateFrom(await valueOf(path, 'sample rate', where), `variable "${path}"`, where),
    startTimeOf: async (path, where) => startFrom(await valueOf(path, 'start time', where), `variable "${path}"`, where),
    async channelNamesOf(path, where) {
      const { m, place } = find(path, 'channel names', where);
      refuseKind(m, place, 'channel names');
      if (m.kind !== 1) throw new RecordingError(`${place} is a numeric matrix; the channel names are a text matrix of one name a row (a level 4 file holds no cell arrays); correct ${where}`);
      return charMatrixRows(charCodesText(await valuesOf(m, place)), m.rows, m.columns);
    },
    readBy() { /* every matrix is stored as it is: each source reads from its own place */ },
    async close(sources: ChannelSource[]) {
      for (const s of sources.splice(0)) s.cursor.close();
      await file.close().catch(() => {});
    },
  };
}
