// The WebAssembly SIMD FFT kernels (stages/dsp/fft-simd.c) bound for TypeScript: one instance per thread, plans and
// scratch in its memory made once per size, inputs copied in and results copied out (memcpy, cheap beside a transform).
import { bitReversal, stageTwiddles } from './fft.js';
import { FFT_SIMD_WASM } from './fft-simd.wasm.js';
import type { PeakScan } from './true-peak.js';

interface Exports {
  memory: WebAssembly.Memory;
  __heap_base: WebAssembly.Global;
  cfft(plan: number, re: number, im: number): void;
  rfft(plan: number, x: number, re: number, im: number): void;
  periodogram_add(plan: number, x: number, w: number, re: number, im: number, acc: number): void;
  welch_add(plan: number, x: number, length: number, hop: number, w: number, re: number, im: number, acc: number): number;
  analytic(rplan: number, cplan: number, x: number, g: number, re: number, im: number, sr: number, si: number, from: number, to: number, outRe: number, outAbs: number): void;
  true_peak_scan(x: number, from: number, to: number, first: number, peaks: number, tapsHalf: number, tapsQuarter: number, cand: number, peakAt: number, estimate: number, xf: number): void;
}

class Kernels {
  private readonly x: Exports;
  private top: number;
  private readonly cplans = new Map<number, number>();
  private readonly rplans = new Map<number, number>();
  private readonly regions = new Map<string, number>();

  constructor() {
    const bytes = Buffer.from(FFT_SIMD_WASM, 'base64');
    this.x = new WebAssembly.Instance(new WebAssembly.Module(bytes)).exports as unknown as Exports;
    this.top = this.x.__heap_base.value as number;
  }

  get exports(): Exports { return this.x; }

  /** 16-byte aligned bytes of the instance's memory, grown when needed; never given back (plans and scratch live as long as the thread). */
  private alloc(bytes: number): number {
    const at = (this.top + 15) & ~15;
    this.top = at + bytes;
    const need = this.top - this.x.memory.buffer.byteLength;
    if (need > 0) this.x.memory.grow(Math.ceil(need / 65536));
    return at;
  }

  // By place, then length: two small-integer keys, where one key of both would be a double the engine boxes at each call.
  private views = new Map<number, Map<number, Float64Array>>();
  private viewsOf: ArrayBuffer | null = null;
  private whole: Float64Array | null = null;

  /** A view of doubles in the instance's memory, kept until the memory grows (which detaches every view). */
  f64(at: number, length: number): Float64Array {
    const buffer = this.current();
    let at0 = this.views.get(at);
    if (!at0) this.views.set(at, (at0 = new Map()));
    let v = at0.get(length);
    if (!v) at0.set(length, (v = new Float64Array(buffer, at, length)));
    return v;
  }

  /** The whole memory as doubles (index = byte place / 8), for copies within it that make no views. */
  heap(): Float64Array {
    const buffer = this.current();
    return (this.whole ??= new Float64Array(buffer, 0, buffer.byteLength >>> 3));
  }

  private current(): ArrayBuffer {
    const buffer = this.x.memory.buffer;
    if (buffer !== this.viewsOf) { this.views.clear(); this.whole = null; this.viewsOf = buffer; }
    return buffer;
  }

  private readonly spare = new Map<number, number[]>();
  /** Bytes for one user (a Welch accumulator's segment and sum), from those given back when there are. */
  take(bytes: number): number { return this.spare.get(bytes)?.pop() ?? this.alloc(bytes); }
  give(at: number, bytes: number): void { (this.spare.get(bytes) ?? this.spare.set(bytes, []).get(bytes)!).push(at); }

  /** A region kept under a name (scratch of a size, a window, a filter's gains), filled by `fill` the first time. */
  region(key: string, length: number, fill?: (v: Float64Array) => void): number {
    let at = this.regions.get(key);
    if (at === undefined) {
      at = this.alloc(8 * length);
      this.regions.set(key, at);
      fill?.(this.f64(at, length));
    }
    return at;
  }

  private readonly reversals = new Map<number, Uint32Array>();
  /** Bit reversal of length n, kept per length. */
  reversal(n: number): Uint32Array {
    return this.reversals.get(n) ?? this.reversals.set(n, bitReversal(n)).get(n)!;
  }

  complexPlan(n: number): number {
    let at = this.cplans.get(n);
    if (at !== undefined) return at;
    const rev = this.alloc(4 * n);
    new Uint32Array(this.x.memory.buffer, rev, n).set(this.reversal(n));
    const tw = stageTwiddles(n);
    const twAt = this.alloc(8 * Math.max(1, tw.length));
    this.f64(twAt, tw.length).set(tw);
    at = this.alloc(16);
    new Int32Array(this.x.memory.buffer, at, 4).set([n, Math.log2(n) % 2, rev, twAt]);
    this.cplans.set(n, at);
    return at;
  }

  realPlan(n: number): number {
    let at = this.rplans.get(n);
    if (at !== undefined) return at;
    const half = this.complexPlan(n / 2);
    const split = this.alloc(16 * (n / 4 + 1));
    const s = this.f64(split, 2 * (n / 4 + 1));
    for (let k = 0; k <= n / 4; k++) { s[2 * k] = Math.cos((2 * Math.PI * k) / n); s[2 * k + 1] = -Math.sin((2 * Math.PI * k) / n); }
    const zr = this.alloc(4 * n), zi = this.alloc(4 * n);
    at = this.alloc(32);
    const halfFields = new Int32Array(this.x.memory.buffer, half, 4);
    new Int32Array(this.x.memory.buffer, at, 8).set([n, ...halfFields, split, zr, zi]);
    this.rplans.set(n, at);
    return at;
  }
}

let instance: Kernels | null = null;
const kernels = () => (instance ??= new Kernels());

// Memory of a PeriodogramSum never ended (its recording failed) goes back when it is collected.
const unreturned = new FinalizationRegistry<[number, number]>(([at, bytes]) => kernels().give(at, bytes));

/** A running sum of Welch's modified periodograms whose held samples and sum live in the kernels' memory: addStretch()
 *  adds a chunk's whole segments; end() returns the sum and gives the memory back. */
export class PeriodogramSum {
  private readonly at: number;
  private readonly bytes: number;
  private readonly plan: number;
  private readonly window: number;
  private readonly re: number;
  private readonly im: number;
  private ended: Float64Array | null = null;

  constructor(readonly n: number, w: Float64Array, windowKey: string) {
    const k = kernels();
    this.plan = k.realPlan(n);
    this.window = k.region(`w:${windowKey}:${n}`, n, (v) => v.set(w));
    this.re = k.region(`re:${n}`, n / 2 + 1);
    this.im = k.region(`im:${n}`, n / 2 + 1);
    this.bytes = 8 * (n + n / 2 + 1);
    this.at = k.take(this.bytes);
    k.f64(this.at + 8 * n, n / 2 + 1).fill(0);
    unreturned.register(this, [this.at, this.bytes], this);
  }

  /** The segment to fill, as a view of the kernels' memory (ask again after making other plans: memory may grow). */
  segment(): Float64Array { return kernels().f64(this.at, this.n); }

  /**
   * Adds the periodogram of every whole segment of the stream made of the first `held` samples of segment() and then x,
   * segments starting `hop` apart (hop ≤ n), in order; the samples after the last segment's start are left at the start of
   * segment(). Returns the segments added and the samples now held. The stretch is copied once into memory shared by the
   * thread's sums (one call runs to its end before the next).
   */
  addStretch(held: number, x: Float64Array, hop: number): { added: number; held: number } {
    const k = kernels(), length = held + x.length;
    const cap = 2 ** Math.ceil(Math.log2(Math.max(length, 2 * this.n)));
    const at = k.region(`welch:stretch:${cap}`, cap); // before any view: making it may grow the memory
    // Copies within the memory, by place: no view made for a part of it.
    const heap = k.heap(), stretch = at >>> 3, segment = this.at >>> 3;
    heap.copyWithin(stretch, segment, segment + held);
    heap.set(x, stretch + held);
    const added = k.exports.welch_add(this.plan, at, length, hop, this.window, this.re, this.im, this.at + 8 * this.n);
    const from = Math.min(added * hop, length), kept = Math.min(length - from, this.n);
    heap.copyWithin(segment, stretch + from, stretch + from + kept);
    return { added, held: kept };
  }

  /** The sum of the periodograms added; the memory goes back (later calls return the same sum). */
  end(): Float64Array {
    if (!this.ended) {
      this.ended = kernels().f64(this.at + 8 * this.n, this.n / 2 + 1).slice();
      unreturned.unregister(this);
      kernels().give(this.at, this.bytes);
    }
    return this.ended;
  }
}

/** acc[k] += |X[k]|², k = 0 … n/2, X the DFT of w·(x − mean(x)) (Welch's modified periodogram); n = x.length, a power of two. */
export function periodogramAdd(x: Float64Array, w: Float64Array, windowKey: string, acc: Float64Array): void {
  const k = kernels(), n = x.length;
  const plan = k.realPlan(n);
  const xa = k.region(`x:${n}`, n), wa = k.region(`w:${windowKey}:${n}`, n, (v) => v.set(w));
  const re = k.region(`re:${n}`, n / 2 + 1), im = k.region(`im:${n}`, n / 2 + 1), aa = k.region(`acc:${n}`, n / 2 + 1);
  k.f64(xa, n).set(x);
  const accView = k.f64(aa, n / 2 + 1);
  accView.set(acc);
  k.exports.periodogram_add(plan, xa, wa, re, im, aa);
  acc.set(k.f64(aa, n / 2 + 1));
}

/** Real-input DFT X[k], k = 0 … n/2, into re and im (length n/2 + 1). */
export function realDft(x: Float64Array, re: Float64Array, im: Float64Array): void {
  const k = kernels(), n = x.length;
  const plan = k.realPlan(n);
  const xa = k.region(`x:${n}`, n), ra = k.region(`re:${n}`, n / 2 + 1), ia = k.region(`im:${n}`, n / 2 + 1);
  k.f64(xa, n).set(x);
  k.exports.rfft(plan, xa, ra, ia);
  re.set(k.f64(ra, n / 2 + 1));
  im.set(k.f64(ia, n / 2 + 1));
}

/** Complex DFT of (re, im) in place, natural order in and out. */
export function complexDft(re: Float64Array, im: Float64Array): void {
  const k = kernels(), n = re.length;
  const plan = k.complexPlan(n);
  const ra = k.region(`cr:${n}`, n), ia = k.region(`ci:${n}`, n);
  const rev = k.reversal(n), vr = k.f64(ra, n), vi = k.f64(ia, n);
  for (let i = 0; i < n; i++) { vr[rev[i]] = re[i]; vi[rev[i]] = im[i]; }
  k.exports.cfft(plan, ra, ia);
  re.set(k.f64(ra, n));
  im.set(k.f64(ia, n));
}

/** The plans and memory of filtered analytic blocks of length n with one set of gains, looked up once. */
export class AnalyticBlocks {
  private readonly at: { rp: number; cp: number; x: number; g: number; re: number; im: number; sr: number; si: number; or: number; oa: number };

  /** `gains` (re, im interleaved for k = 0 … n/2, with the inverse's 1/n) is made only the first time a thread meets `gainKey`. */
  constructor(readonly n: number, gains: () => Float64Array, gainKey: string) {
    const k = kernels();
    this.at = {
      rp: k.realPlan(n), cp: k.complexPlan(n), x: k.region(`x:${n}`, n), g: k.region(`g:${gainKey}:${n}`, n + 2, (v) => v.set(gains())),
      re: k.region(`re:${n}`, n / 2 + 1), im: k.region(`im:${n}`, n / 2 + 1), sr: k.region(`cr:${n}`, n), si: k.region(`ci:${n}`, n),
      or: k.region(`or:${n}`, n), oa: k.region(`oa:${n}`, n),
    };
  }

  /** z = IDFT(g·DFT(x)) for the block x (negative frequencies get none); Re z and |z| of samples [from, to) into outRe and outAbs. */
  run(x: Float64Array, from: number, to: number, outRe: Float64Array, outAbs: Float64Array): void {
    const k = kernels(), a = this.at, n = this.n;
    k.f64(a.x, n).set(x);
    k.exports.analytic(a.rp, a.cp, a.x, a.g, a.re, a.im, a.sr, a.si, from, to, a.or, a.oa);
    outRe.set(k.f64(a.or, to - from));
    outAbs.set(k.f64(a.oa, to - from));
  }
}

/**
 * The true peak's scan in WebAssembly (true_peak_scan in fft-simd.c; TruePeak in true-peak.ts feeds it): the block, the
 * peaks and the candidates' scratch live in the kernels' memory, shared by the thread's channels (a scan runs to its end
 * before the next begins) and sized by the largest block so far.
 */
export function simdPeakScan(taps: { half: () => Float64Array; quarter: () => Float64Array }): PeakScan {
  const k = kernels();
  const at = { taps: k.region('true-peak:taps-half', 48, (v) => v.set(taps.half())), quarterTaps: k.region('true-peak:taps-quarter', 48, (v) => v.set(taps.quarter())), peaks: k.region('true-peak:peaks', 4) };
  const room = (length: number) => {
    const cap = 2 ** Math.ceil(Math.log2(Math.max(length, 4096)));
    // cand holds cap ints and xf cap floats (cap / 2 doubles each).
    return {
      cap, x: k.region(`true-peak:x:${cap}`, cap), cand: k.region(`true-peak:cand:${cap}`, cap / 2), peakAt: k.region(`true-peak:peak-at:${cap}`, cap),
      estimate: k.region(`true-peak:estimate:${cap}`, cap), xf: k.region(`true-peak:xf:${cap}`, cap / 2),
    };
  };
  let r = room(0);
  return {
    block(length) { if (length > r.cap) r = room(length); return k.f64(r.x, r.cap); },
    scan(_block, from, to, first, peaks) {
      const p = k.f64(at.peaks, 3);
      p.set(peaks);
      k.exports.true_peak_scan(r.x, from, to, first, at.peaks, at.taps, at.quarterTaps, r.cand, r.peakAt, r.estimate, r.xf);
      peaks.set(k.f64(at.peaks, 3));
    },
  };
}
