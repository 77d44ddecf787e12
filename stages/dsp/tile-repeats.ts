// Exact repeats of the signal at a lag of whole tiles: a block of data sent again (a transfer re-sending its last buffer).
//
// Method (ours): the samples are cut into aligned tiles of 64; each tile gets a fingerprint, a weighted sum of 8 of its samples at
// fixed places (equal tiles give equal sums, bit for bit); the fingerprints of the last MAX_LAG_TILES tiles are kept in a small
// hash table, and a tile whose fingerprint was seen a whole number of tiles back is compared with that tile sample by sample,
// exactly (===). Only those matches, rare on measured data, touch every sample a second time. A stretch that repeats is then
// followed sample by sample past its tiles' edges, so a block not aligned to the tiles is counted whole.

/** Samples a tile holds: blocks whose length is a multiple of it are found. */
export const TILE = 64;
/** The longest lag looked at, in tiles (8192 samples): DAQ buffers are shorter (our choice). */
export const MAX_LAG_TILES = 128;
/** A tile is judged only where its samples change from one to the next at least this often: a quiet or slow signal resting on
 *  a few codes repeats by chance, measured data that moves never does (our choice). */
export const MIN_CHANGES = 32;

const RING = 16384; // a power of two holding the longest lag, a tile and the reach past its edge (at least (128 + 3) × 64)
const RING_MASK = RING - 1;
const SLICE = 4096; // samples taken into the ring at a time, so the ring always holds what a judged tile is compared with
const TABLE = 4096; // hash slots for the recent fingerprints: at most 128 live in 4096, so an eviction before use is rare
const TABLE_BITS = 12;
const RECENT = 256; // fingerprints of the last tiles by tile number, to follow a stretch at its lag without the table
const PROBES = [0, 9, 18, 27, 36, 45, 54, 63];
const WEIGHTS = [1, 1.6180339887498949, 2.414213562373095, 3.302775637731995, 4.23606797749979, 5.192582403567252, 6.16227766016838, 7.14142842854285];

/** A stretch that repeats the samples `lag` before it: [start, end) in samples. */
export interface RepeatStretch { start: number; end: number; lag: number }

/** The hash slot of a fingerprint: its two 32-bit words mixed by a multiplicative hash (Knuth, TAOCP vol. 3, 6.4). */
function slotOf(bits: Float64Array, words: Uint32Array, fp: number): number {
  bits[0] = fp;
  return Math.imul(words[0] ^ words[1], 0x9e3779b1) >>> (32 - TABLE_BITS);
}

/** The tile's fingerprint: a weighted sum of 8 of its samples (deterministic, so equal tiles give equal sums). */
function fingerprint(ring: Float64Array, s: number): number {
  let h = 0;
  for (let k = 0; k < 8; k++) h += WEIGHTS[k] * ring[(s + PROBES[k]) & RING_MASK];
  return h;
}

/** Whether the tile at `s` equals, sample for sample, the one `lag` before it, and moves enough to be judged (no NaN is equal). */
function sameAndMoving(ring: Float64Array, s: number, lag: number): boolean {
  let changes = 0, prev = ring[s & RING_MASK];
  for (let j = 0; j < TILE; j++) {
    const v = ring[(s + j) & RING_MASK];
    if (v !== ring[(s + j - lag) & RING_MASK]) return false;
    if (v !== prev) changes++;
    prev = v;
  }
  return changes >= MIN_CHANGES;
}

/** Finds stretches of the signal that repeat it exactly at a lag of 1 to MAX_LAG_TILES whole tiles, fed in chunks of any size. */
export class TileRepeats {
  private n = 0; // samples taken
  private tiles = 0; // tiles judged
  private readonly recent = new Float64Array(RECENT);
  // The stretch being followed: its lag in tiles (0: none), its first sample and its last matching tile.
  private lagTiles = 0;
  private start = 0;
  private lastTile = -1;
  private lastEnd = 0; // the end of the last stretch, before which no later one starts
  private readonly bits = new Float64Array(1); // a fingerprint's bits for hashing
  private readonly words = new Uint32Array(this.bits.buffer);

  /** `ring` (RING doubles), `tableFp` and `tableTile` (TABLE doubles each): zeroed working buffers, lent by the recording. */
  constructor(
    private readonly found: (stretch: RepeatStretch) => void,
    private readonly ring: Float64Array = new Float64Array(RING),
    private readonly tableFp: Float64Array = new Float64Array(TABLE),
    private readonly tableTile: Float64Array = new Float64Array(TABLE),
  ) {}

  static readonly ringLength = RING;
  static readonly tableLength = TABLE;

  push(x: Float64Array): void {
    for (let a = 0; a < x.length; a += SLICE) {
      const b = Math.min(x.length, a + SLICE), at = this.n & RING_MASK, room = RING - at;
      const part = a === 0 && b === x.length ? x : x.subarray(a, b);
      if (part.length <= room) this.ring.set(part, at);
      else { this.ring.set(part.subarray(0, room), at); this.ring.set(part.subarray(room), 0); }
      this.n += b - a;
      const whole = Math.floor(this.n / TILE);
      for (let t = this.tiles; t < whole; t++) this.judge(t);
      this.tiles = whole;
    }
  }

  /** Ends the stretch being followed; call once every sample is in. */
  end(): void {
    if (this.lagTiles > 0) this.close(this.n);
  }

  private judge(t: number): void {
    const ring = this.ring, s = t * TILE, fp = fingerprint(ring, s);
    this.recent[t & (RECENT - 1)] = fp;
    let lag = 0;
    // Following a stretch: the same lag again, from the recent fingerprints (no table eviction can lose it).
    if (this.lagTiles > 0 && this.lastTile === t - 1 && this.recent[(t - this.lagTiles) & (RECENT - 1)] === fp && sameAndMoving(ring, s, this.lagTiles * TILE)) lag = this.lagTiles;
    const slot = slotOf(this.bits, this.words, fp);
    if (lag === 0 && this.tableFp[slot] === fp && this.tableTile[slot] > 0) {
      const back = t + 1 - this.tableTile[slot];
      if (back >= 1 && back <= MAX_LAG_TILES && sameAndMoving(ring, s, back * TILE)) lag = back;
    }
    this.tableFp[slot] = fp;
    this.tableTile[slot] = t + 1;
    if (lag > 0 && lag === this.lagTiles && this.lastTile === t - 1) { this.lastTile = t; return; }
    if (this.lagTiles > 0) this.close(s + TILE);
    if (lag > 0) this.open(t, lag);
  }

  /** Starts following a stretch at tile t, reaching back sample by sample into the tile before (a block not aligned to tiles). */
  private open(t: number, lagTiles: number): void {
    const ring = this.ring, lag = lagTiles * TILE, s = t * TILE, floor = Math.max(this.lastEnd, lag, s - TILE + 1);
    let i = s;
    while (i - 1 >= floor && ring[(i - 1) & RING_MASK] === ring[(i - 1 - lag) & RING_MASK]) i--;
    this.lagTiles = lagTiles; this.start = Math.max(i, this.lastEnd); this.lastTile = t;
  }

  /** Ends the stretch, reaching forward sample by sample past its last tile up to `limit` (the samples judged so far). */
  private close(limit: number): void {
    const ring = this.ring, lag = this.lagTiles * TILE;
    let end = (this.lastTile + 1) * TILE;
    const stop = Math.min(limit, end + TILE - 1);
    while (end < stop && ring[end & RING_MASK] === ring[(end - lag) & RING_MASK]) end++;
    this.lagTiles = 0; this.lastTile = -1; this.lastEnd = end;
    // A whole block sent again at least once: a lone matching tile inside a longer lag is no re-sent block.
    if (end - this.start >= lag) this.found({ start: this.start, end, lag });
  }
}
