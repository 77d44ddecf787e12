// A dataset's stored type as the file itself describes it: h5wasm's description of a type lacks an integer's precision and
// bit offset (an int24 in 32-bit storage reads as an int32), so the datatype message is read from the dataset's object
// header. Layouts from the HDF5 File Format Specification 3.0: superblock (II.A), object headers version 1 and 2 (IV.A.1),
// header continuation (IV.A.2.q), shared messages (IV.A.2), datatype message (IV.A.2.d), attribute message (IV.A.2.m),
// attribute info message (IV.A.2.c), fractal heap (III.G).
import { fstatSync, readSync } from 'node:fs';
import { RecordingError } from './recording.js';

/** Bytes [position, position + length) of the file; fewer than asked is the file's end. */
export type ReadAt = (position: number, length: number) => Uint8Array;

/** Positioned reads of an open file, each bounded by its size. */
export function readerOf(fd: number): ReadAt {
  const size = fstatSync(fd).size;
  return (position, length) => {
    const n = Math.max(0, Math.min(length, size - position));
    const b = new Uint8Array(n);
    for (let got = 0, k = 1; got < n && k > 0; got += k) k = readSync(fd, b, got, n - got, position + got);
    return b;
  };
}

/** A fixed-point (class 0) or floating-point (class 1) type as stored; other classes keep their class and size only. */
export interface StoredType {
  cls: number; size: number; bigEndian: boolean; signed: boolean;
  /** Bits of the value and the bit where they start in the storage word; the rest is padding. */
  precision: number; offset: number;
  /** Floating-point layout: sign bit, exponent and mantissa places and sizes, bias, byte order (0 little, 1 big, 3 VAX), mantissa normalisation. */
  float: { sign: number; expAt: number; expBits: number; mantAt: number; mantBits: number; bias: number; order: number; norm: number } | null;
}

interface Superblock { offsetBytes: number; lengthBytes: number; base: number }

/** Most object header blocks and messages walked for one type: far beyond what a dataset's header holds. */
const MAX_BLOCKS = 64, MAX_MESSAGES = 4096, MAX_BLOCK_BYTES = 1 << 24;
/** Most direct blocks of an attribute heap searched: a thousand attributes of a kilobyte fill some 64 (64 KB blocks at most, HDF5's default). */
const MAX_HEAP_BLOCKS = 4096;

const damaged = (what: string) => new RecordingError(`${what}; the file is damaged: copy it again`);

function exactly(read: ReadAt, at: number, length: number, what: string): Uint8Array {
  const b = read(at, length);
  if (b.length !== length) throw damaged(`${what} at byte ${at} runs past the file's end`);
  return b;
}

/** An unsigned little-endian number of 1 to 8 bytes; an address past 2^53 is no place in a file. */
function unsigned(b: Uint8Array, at: number, bytes: number, what: string): number {
  let v = 0;
  for (let i = bytes - 1; i >= 0; i--) v = v * 256 + b[at + i];
  if (!Number.isSafeInteger(v)) throw damaged(`${what} is beyond any file's size`);
  return v;
}

/** Sizes of addresses and lengths, and the base addresses count from (the superblock's place, behind a user block). */
function superblockAt(read: ReadAt, at: number): Superblock {
  const b = exactly(read, at, 48, 'the superblock');
  const version = b[8];
  if (version > 3) throw damaged(`the superblock is of version ${version}, which no HDF5 library writes`);
  const [offsetBytes, lengthBytes] = version <= 1 ? [b[13], b[14]] : [b[9], b[10]];
  if (![2, 4, 8].includes(offsetBytes) || ![2, 4, 8].includes(lengthBytes)) throw damaged(`the superblock gives ${offsetBytes}-byte addresses and ${lengthBytes}-byte lengths`);
  const baseAt = version === 0 ? 24 : version === 1 ? 28 : 12;
  return { offsetBytes, lengthBytes, base: unsigned(b, baseAt, offsetBytes, 'the base address') };
}

interface Block { at: number; length: number; v2: boolean; creationOrder: boolean; signature: boolean }

/** The datatype message's data in the object header at `address` (file position), following continuation blocks. */
function datatypeMessageAt(read: ReadAt, sb: Superblock, address: number): { data: Uint8Array; shared: boolean } {
  const found = messageAt(read, sb, address, (type, data, flags) => (type === 0x03 ? { data, shared: (flags & 0x02) !== 0 } : null));
  if (!found) throw damaged(`the object header at byte ${address} holds no datatype message`);
  return found;
}

/** The first message of the object header at `address` that `pick` takes (by type, data and flags), following continuation blocks; null for none. */
function messageAt<T>(read: ReadAt, sb: Superblock, address: number, pick: (type: number, data: Uint8Array, flags: number) => T | null): T | null {
  const head = exactly(read, address, 6, 'an object header');
  const blocks: Block[] = [];
  let v2: boolean, creationOrder = false;
  if (head[0] === 0x4f && head[1] === 0x48 && head[2] === 0x44 && head[3] === 0x52) {
    // Version 2: "OHDR", version, flags, optional times and attribute limits, then the first block's size.
    if (head[4] !== 2) throw damaged(`the object header at byte ${address} is of version ${head[4]}`);
    const flags = head[5], sizeBytes = 1 << (flags & 3);
    const at = address + 6 + (flags & 0x20 ? 16 : 0) + (flags & 0x10 ? 4 : 0);
    const length = unsigned(exactly(read, at, sizeBytes, 'an object header'), 0, sizeBytes, 'an object header\'s size');
    v2 = true; creationOrder = (flags & 0x04) !== 0;
    blocks.push({ at: at + sizeBytes, length, v2, creationOrder, signature: false });
  } else if (head[0] === 1) {
    // Version 1: version, reserved, message count, reference count, then the first block's size; messages from byte 16.
    const length = unsigned(exactly(read, address, 16, 'an object header'), 8, 4, 'an object header\'s size');
    v2 = false;
    blocks.push({ at: address + 16, length, v2, creationOrder, signature: false });
  } else throw damaged(`no object header at byte ${address} (it starts with byte ${head[0]})`);
  let messages = 0;
  for (let k = 0; k < blocks.length; k++) {
    if (k >= MAX_BLOCKS) throw damaged(`the object header at byte ${address} continues over more than ${MAX_BLOCKS} blocks`);
    const blk = blocks[k];
    if (blk.length > MAX_BLOCK_BYTES) throw damaged(`an object header block of ${blk.length} bytes at byte ${blk.at}`);
    const b = exactly(read, blk.at, blk.length, 'an object header block');
    let pos = 0, end = b.length;
    if (blk.signature) {
      if (!(b[0] === 0x4f && b[1] === 0x43 && b[2] === 0x48 && b[3] === 0x4b)) throw damaged(`no object header continuation at byte ${blk.at}`);
      pos = 4;
    }
    if (blk.signature) end -= 4; // a continuation block's checksum (the first block's size leaves its checksum out)
    const prefix = blk.v2 ? 4 + (blk.creationOrder ? 2 : 0) : 8;
    while (pos + prefix <= end) {
      if (++messages > MAX_MESSAGES) throw damaged(`the object header at byte ${address} holds more than ${MAX_MESSAGES} messages`);
      const type = blk.v2 ? b[pos] : b[pos] | (b[pos + 1] << 8);
      const size = blk.v2 ? b[pos + 1] | (b[pos + 2] << 8) : b[pos + 2] | (b[pos + 3] << 8);
      const flags = blk.v2 ? b[pos + 3] : b[pos + 4];
      const data = pos + prefix;
      if (data + size > end) throw damaged(`a message of the object header at byte ${address} runs past its block`);
      const picked = pick(type, b.subarray(data, data + size), flags);
      if (picked != null) return picked;
      if (type === 0x10) {
        const d = b.subarray(data, data + size);
        const at = sb.base + unsigned(d, 0, sb.offsetBytes, 'a continuation\'s address');
        blocks.push({ at, length: unsigned(d, sb.offsetBytes, sb.lengthBytes, 'a continuation\'s length'), v2, creationOrder, signature: v2 });
      }
      pos = data + size;
    }
  }
  return null;
}

/** The type a datatype message describes. */
export function decodeDatatype(d: Uint8Array): StoredType {
  if (d.length < 8) throw damaged(`a datatype message of ${d.length} bytes`);
  const cls = d[0] & 0x0f, bits = d[1] | (d[2] << 8) | (d[3] << 16);
  const size = unsigned(d, 4, 4, 'a type\'s size');
  const base = { cls, size, bigEndian: (bits & 1) !== 0, signed: false, precision: 8 * size, offset: 0, float: null };
  if (cls !== 0 && cls !== 1) return base;
  if (d.length < (cls === 0 ? 12 : 20)) throw damaged(`a datatype message of ${d.length} bytes`);
  const offset = d[8] | (d[9] << 8), precision = d[10] | (d[11] << 8);
  if (cls === 0) return { ...base, signed: (bits & 0x08) !== 0, offset, precision };
  return {
    ...base, offset, precision, signed: true,
    float: { sign: (bits >> 8) & 0xff, expAt: d[12], expBits: d[13], mantAt: d[14], mantBits: d[15], bias: unsigned(d, 16, 4, 'an exponent bias'), order: (bits & 1) | (((bits >> 6) & 1) << 1), norm: (bits >> 4) & 3 },
  };
}

/** An attribute message (IV.A.2.m, versions 1 to 3) when it names `want`: its datatype's bytes, and whether they are a shared message. */
function attributeNamed(d: Uint8Array, want: Uint8Array): { type: Uint8Array; shared: boolean } | null {
  if (d.length < 8) return null;
  const version = d[0], flags = d[1];
  const nameSize = d[2] | (d[3] << 8), typeSize = d[4] | (d[5] << 8);
  // Version 1 pads the name, datatype and dataspace to 8 bytes; version 3 adds the name's character set.
  const pad = (n: number) => (version === 1 ? Math.ceil(n / 8) * 8 : n);
  const nameAt = version === 3 ? 9 : 8, typeAt = nameAt + pad(nameSize);
  if (version < 1 || version > 3 || typeSize === 0 || typeAt + typeSize > d.length) return null;
  // The name is stored with its terminating NUL.
  const stored = d.subarray(nameAt, nameAt + nameSize);
  if (stored.length !== want.length + 1 || stored[want.length] !== 0 || want.some((c, i) => stored[i] !== c)) return null;
  return { type: d.subarray(typeAt, typeAt + typeSize), shared: version > 1 && (flags & 0x01) !== 0 };
}

/** Whether `bytes` bytes at `at` are all ones: HDF5's undefined address. */
const undefinedAt = (b: Uint8Array, at: number, bytes: number) => b.subarray(at, at + bytes).every((x) => x === 0xff);

/**
 * The message of the attribute `want` kept in dense storage (an object holding more attributes than its header keeps,
 * 8 by default, where it tracks their creation order): the attribute info message (IV.A.2.c) names a fractal heap (III.G)
 * whose direct blocks hold the attribute messages as they would stand in the header. Its blocks are searched for the
 * message naming the attribute (a version, the name's size, the name and its NUL), rather than the name index's B-tree
 * walked: the same message, found without hashing the name. Null where the object keeps no attributes densely.
 */
function denseAttribute(read: ReadAt, sb: Superblock, address: number, want: Uint8Array, name: string): { type: Uint8Array; shared: boolean } | null {
  const info = messageAt(read, sb, address, (type, d) => (type === 0x15 ? d : null));
  if (!info) return null;
  const heapField = 2 + (info[1] & 0x01 ? 2 : 0);
  if (info[0] !== 0 || info.length < heapField + sb.offsetBytes) throw damaged(`an attribute info message of version ${info[0]} (${info.length} bytes)`);
  if (undefinedAt(info, heapField, sb.offsetBytes)) return null;
  const heapAt = sb.base + unsigned(info, heapField, sb.offsetBytes, 'a fractal heap\'s address');
  const O = sb.offsetBytes, L = sb.lengthBytes;
  // Its fields to the root block's row count: 14 bytes, ten lengths and two addresses, the table's width, its block sizes, two counts, the root's address and rows.
  const h = exactly(read, heapAt, 14 + 12 * L + 3 * O + 8, 'a fractal heap\'s header');
  if (!(h[0] === 0x46 && h[1] === 0x52 && h[2] === 0x48 && h[3] === 0x50)) throw damaged(`no fractal heap header at byte ${heapAt}`);
  const filtered = (h[7] | (h[8] << 8)) > 0;
  if (filtered) throw new RecordingError(`attribute "${name}" is kept in a compressed attribute heap, which quern does not read; save the file with fewer attributes on that object, or without compressing its attribute heap`);
  const checksummed = (h[9] & 0x02) !== 0;
  let at = 14 + 10 * L + 2 * O;
  const width = h[at] | (h[at + 1] << 8); at += 2;
  const startBlock = unsigned(h, at, L, 'a heap\'s starting block size'); at += L;
  const maxDirect = unsigned(h, at, L, 'a heap\'s largest direct block'); at += L;
  const heapBits = h[at] | (h[at + 1] << 8); at += 4;
  const rootAt = h.subarray(at, at + O); at += O;
  const rows = h[at] | (h[at + 1] << 8);
  // Block sizes are powers of two (III.G); a heap searched over more than MAX_HEAP_BLOCKS blocks is no attribute heap.
  const power = (n: number) => n > 0 && Number.isInteger(Math.log2(n));
  if (width < 1 || !power(startBlock) || !power(maxDirect) || maxDirect < startBlock || maxDirect > MAX_BLOCK_BYTES || heapBits > 64) throw damaged(`a fractal heap at byte ${heapAt} of ${width} blocks a row from ${startBlock} to ${maxDirect} bytes`);
  if (undefinedAt(rootAt, 0, O)) return null;
  const root = sb.base + unsigned(rootAt, 0, O, 'a heap\'s root block');
  const offsetBytes = Math.ceil(heapBits / 8);
  // A direct block: its signature, version, heap address and offset in the heap (and a checksum) before the objects.
  const search = (blockAt: number, size: number) => {
    const b = exactly(read, blockAt, size, 'a fractal heap\'s direct block');
    if (!(b[0] === 0x46 && b[1] === 0x48 && b[2] === 0x44 && b[3] === 0x42)) throw damaged(`no fractal heap direct block at byte ${blockAt}`);
    for (let p = 5 + O + offsetBytes + (checksummed ? 4 : 0); p + 8 <= b.length; p++) {
      if (b[p] < 1 || b[p] > 3 || (b[p + 2] | (b[p + 3] << 8)) !== want.length + 1) continue;
      const found = attributeNamed(b.subarray(p), want);
      if (found) return found;
    }
    return null;
  };
  if (rows === 0) return search(root, startBlock);
  // A root indirect block: rows of `width` direct blocks, doubling from the second row (III.G, the doubling table).
  const directRows = Math.log2(maxDirect) - Math.log2(startBlock) + 2;
  const kept = Math.min(rows, directRows);
  if (kept * width > MAX_HEAP_BLOCKS) throw damaged(`a fractal heap at byte ${heapAt} of ${kept} rows of ${width} blocks`);
  const ib = exactly(read, root, 5 + O + offsetBytes + kept * width * O, 'a fractal heap\'s indirect block');
  if (!(ib[0] === 0x46 && ib[1] === 0x48 && ib[2] === 0x49 && ib[3] === 0x42)) throw damaged(`no fractal heap indirect block at byte ${root}`);
  for (let r = 0; r < kept; r++) {
    for (let c = 0; c < width; c++) {
      const entry = 5 + O + offsetBytes + (r * width + c) * O;
      if (undefinedAt(ib, entry, O)) continue;
      const found = search(sb.base + unsigned(ib, entry, O, 'a heap block\'s address'), startBlock * 2 ** Math.max(0, r - 1));
      if (found) return found;
    }
  }
  if (rows > directRows) throw new RecordingError(`attribute "${name}" may lie in a part of the object's attribute heap that quern does not read (an attribute heap of over ${directRows} rows of blocks); save the file with fewer or smaller attributes on that object`);
  return null;
}

/**
 * The stored type of the attribute `name` of the object (dataset or group) whose header a reference names, from its
 * attribute message (IV.A.2.m, versions 1 to 3) in the header or in dense storage, a committed type followed where it is
 * kept; null where the object holds no such attribute message.
 */
export function attributeTypeOf(read: ReadAt, superblock: number, reference: ArrayLike<number>, name: string): StoredType | null {
  const sb = superblockAt(read, superblock);
  const address = sb.base + unsigned(Uint8Array.from(reference), 0, 8, 'the object\'s address');
  const want = new TextEncoder().encode(name);
  const found = messageAt(read, sb, address, (type, d) => (type === 0x0c ? attributeNamed(d, want) : null)) ?? denseAttribute(read, sb, address, want, name);
  if (!found) return null;
  if (!found.shared) return decodeDatatype(found.type);
  const { data, shared } = datatypeMessageAt(read, sb, committedTypeAddress(sb, found.type));
  if (shared) throw damaged('a committed datatype that is itself shared');
  return decodeDatatype(data);
}

/** Where a shared datatype message (IV.A.2) says its committed type's object header lies: version 1 (address after 8 bytes), 2 (after 2), 3 (type 2, committed: after 2). */
function committedTypeAddress(sb: Superblock, data: Uint8Array): number {
  const version = data[0], type = data[1];
  // Version 3, type 1: the file's shared message heap.
  if (version === 3 && type === 1) throw new RecordingError('its type is kept in the file\'s shared message heap, which quern does not read; copy the dataset into a file made without shared messages (h5py\'s default), or check the file');
  const at = version === 1 ? 8 : 2;
  if (version < 1 || version > 3 || data.length < at + sb.offsetBytes) throw damaged(`a shared datatype message of version ${version}`);
  return sb.base + unsigned(data, at, sb.offsetBytes, 'a committed type\'s address');
}

/**
 * The stored type of the dataset whose object header a reference names (h5wasm's object reference: its address, from the
 * base), in a file whose superblock is at `superblock`. A type shared through a committed datatype is followed there.
 */
export function storedTypeOf(read: ReadAt, superblock: number, reference: ArrayLike<number>): StoredType {
  const sb = superblockAt(read, superblock);
  let address = sb.base + unsigned(Uint8Array.from(reference), 0, 8, 'the dataset\'s address');
  for (let hop = 0; hop < 2; hop++) {
    const { data, shared } = datatypeMessageAt(read, sb, address);
    if (!shared) return decodeDatatype(data);
    address = committedTypeAddress(sb, data);
  }
  throw damaged('a committed datatype that is itself shared');
}
