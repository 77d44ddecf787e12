// The reference scripts' counter noise (test/fixtures/counter_noise.py), sample for sample: uniform, seeded, no state.

// MurmurHash3's 32-bit finaliser of i + seed (Appleby, MurmurHash3, public domain; from memory), to [-0.5, 0.5).
export function counterWhite(n: number, seed: number): Float64Array {
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let h = (i + seed) >>> 0;
    h ^= h >>> 16; h = Math.imul(h, 0x85ebca6b) >>> 0; h ^= h >>> 13; h = Math.imul(h, 0xc2b2ae35) >>> 0; h ^= h >>> 16;
    y[i] = (h >>> 0) / 4294967296 - 0.5;
  }
  return y;
}
