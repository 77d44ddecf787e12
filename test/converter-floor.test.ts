// The noise_floor flag without a declared floor: where the converter's step is known (integer PCM), a 1 s window at the
// converter's own floor (at most 2 steps RMS) in a channel whose other windows stand 20 dB above it is a note naming the
// stretches: a sensor that came loose or lost power reads so, and so does a machine come to rest. References: an ideal quantiser's error is uniform over a step, q/√12 RMS
// (IEEE Std 1241); codes drawn evenly from {−1, 0, 1} have RMS √(2/3) steps (the discrete uniform variance (k² − 1)/12,
// k = 3; derived); a stretch carrying nothing for a share s of the recording leaves its mean square (1 − s) of the live
// part's, so RMS reads √(1 − s) of it (derived; uncorrelated powers add, common practice); a tone's RMS is its amplitude
// over √2 (closed form). Window RMS is also computed here straight from the samples, as numpy's std over each window would.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { encodeWav } from '../scripts/wav-file.js';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { Flag } from '../stages/quality/flag.js';
import { joinedLength, joinedWindowsOf } from '../stages/quality/joined-windows.js';
import { deadShareShortfall, holdsOneValue } from '../stages/quality/quiet-windows.js';
import type { ChannelContext, Stage } from '../stages/stage.js';
import { inChunks, uniform } from './dsp-signals.js';
import { tempDir } from './helpers.js';
import { channel, sine } from './reduce-signal.js';

/** Gaussian noise of RMS `sigma` (Box–Muller over a seeded uniform generator). */
function gaussian(n: number, sigma: number, seed: number): Float64Array {
  const u = uniform(seed);
  return Float64Array.from({ length: n }, () => sigma * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u()));
}

/** RMS about the mean of x[from, to): numpy's x[from:to].std(). */
const stdOf = (x: ArrayLike<number>, from = 0, to = x.length) => {
  let m = 0; for (let i = from; i < to; i++) m += x[i]; m /= to - from;
  let s = 0; for (let i = from; i < to; i++) s += (x[i] - m) ** 2; return Math.sqrt(s / (to - from));
};

/** The samples as the converter's codes give them back: rounded to `step`. */
const onCodes = (x: Float64Array, step: number) => x.map((v) => Math.round(v / step) * step);

async function flagsOf(x: Float64Array, fs: number, decl: ChannelDeclaration, encoding: 'pcm16' | 'pcm24' | 'float32') {
  const path = join(tempDir(), 'x.wav');
  writeFileSync(path, encodeWav({ sampleRate: fs, channels: [x.map((v) => v / decl.scale)], encoding }));
  const r = await reduceRecording({ recording: 'x', path, group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames: 4096 });
  expect(r.reason).toBeUndefined();
  const flag = (name: string) => r.quality[0].flags.find((f) => f.name === name) as Flag;
  return { flag, row: r.rows[0] as Record<string, number | null> };
}

describe('the noise_floor flag at the converter\'s floor (no noise_floor declared)', () => {
  // An invented bench's accelerometer: ±500 m/s² on a 16-bit converter, 4 s at 8 kHz.
  const fs = 8000, n = 4 * fs, scale = 500, step16 = scale / 2 ** 15;
  const acc16 = channel({ scale, range: [-500, 500], bits: 16, max_frequency_hz: 3000 });
  // Vibration at 20 m/s² RMS: a 97 Hz tone (97 whole cycles a second) with a little broadband noise.
  const running = (seed: number) => { const hiss = gaussian(n, 0.5, seed); return sine(n, fs, 97, 20 * Math.SQRT2).map((v, i) => v + hiss[i]); };

  it('notes where the sensor comes loose halfway: ±1 code of noise for the last 2 s, naming the stretch and what the figures rest on', async () => {
    const u = uniform(21);
    const x = onCodes(running(3).map((v, i) => (i < n / 2 ? v : (Math.floor(3 * u()) - 1) * step16)), step16);
    // The dead half's RMS: √(2/3) steps (derived), well within the 2-step floor; the live half's far above it.
    expect(stdOf(x, n / 2) / step16).toBeCloseTo(Math.sqrt(2 / 3), 1);
    const { flag, row } = await flagsOf(x, fs, acc16, 'pcm16');
    const f = flag('noise_floor');
    // A note, not a warning: the same windows come from a machine brought to rest for the last 2 s, so they alone are no
    // evidence of a fault (a rest is part of the test); the note names the stretch so a lab can hold it to its test plan.
    expect(f.severity).toBe('note');
    expect(f.value).toBeNull();
    expect(f.evidence).toMatchObject({ noise_floor: null, windows: 4, quiet_windows: 2, held_windows: 0, quiet_stretches: 1, first_quiet_s: 2, first_quiet_end_s: 4, longest_quiet_s: 2, longest_quiet_end_s: 4 });
    expect(f.evidence.converter_floor as number).toBeCloseTo(2 * step16, 12);
    // The live windows' RMS about their means: the first two seconds' std, computed straight.
    const live = Math.hypot(stdOf(x, 0, fs), stdOf(x, fs, 2 * fs)) / Math.SQRT2;
    expect(f.evidence.live_rms as number).toBeCloseTo(live, 6);
    expect(f.evidence.live_above_floor_db as number).toBeCloseTo(20 * Math.log10(live / (2 * step16)), 6);
    expect(f.message).toMatch(/^no noise_floor declared; 2 of its 4 windows of 1 s sit at the converter's floor \(at most 2 steps RMS, 0\.0305 m\/s\^2\), in one stretch from 2 s to 4 s, while the others stand 5\d\.\d dB above it: a machine at rest, a load held or a quiet gap between events reads so, and so does a sensor that came loose or lost power: by itself no fault/);
    // Half the recording carries nothing: RMS reads √(1/2) of the live part's, 29.3 % low (derived), as the figure shows.
    expect(deadShareShortfall(0.5)).toBeCloseTo(1 - Math.SQRT1_2, 12);
    expect(row.rms! / live).toBeCloseTo(Math.SQRT1_2, 3);
    expect(f.message).toMatch(/the figures take in the whole recording: RMS and band levels read 29\.3 % below those of its live 50 % alone/);
    // The flags that judge the whole recording see nothing: this is the one that tells.
    expect(flag('flatline').severity).toBe('ok');
    expect(flag('saturation').severity).toBe('ok');
  });

  it('reads the same channel clean when the sensor stays on', async () => {
    const { flag } = await flagsOf(running(3), fs, acc16, 'pcm16');
    expect(flag('noise_floor')).toMatchObject({ severity: 'ok', value: null, evidence: { windows: 4, quiet_windows: 0, held_windows: 0, first_quiet_s: null } });
    expect(flag('noise_floor').message).toBe('no noise_floor declared; none of its 4 windows of 1 s at the converter\'s floor (at most 2 steps RMS, 0.0305 m/s^2)');
  });

  it('reads clean a 24-bit channel that turns quiet but stays live, 20 dB above its step; the floor itself, 2 steps, is where it turns', async () => {
    const scale24 = 50, step24 = scale24 / 2 ** 23;
    const acc24 = channel({ scale: scale24, range: [-50, 50], bits: 24, max_frequency_hz: 3000 });
    // 2 s of running, then the machine idles with the sensor's noise 10 steps RMS (20 dB above a step) on the converter's codes.
    const loud = sine(n, fs, 97, 1.4);
    const quietAt = (stepsRms: number, seed: number) => { const hiss = gaussian(n, stepsRms * step24, seed); return onCodes(loud.map((v, i) => (i < n / 2 ? v : 0) + hiss[i]), step24); };
    const idle = quietAt(10, 5);
    expect(20 * Math.log10(stdOf(idle, n / 2) / step24)).toBeCloseTo(20, 0);
    const live = await flagsOf(idle, fs, acc24, 'pcm24');
    expect(live.flag('noise_floor')).toMatchObject({ severity: 'ok', evidence: { windows: 4, quiet_windows: 0 } });
    // Either side of the 2-step floor: 2.5 steps RMS reads clean, 1.5 steps is noted (a stretch at the floor amid live data).
    expect((await flagsOf(quietAt(2.5, 7), fs, acc24, 'pcm24')).flag('noise_floor').severity).toBe('ok');
    const under = (await flagsOf(quietAt(1.5, 7), fs, acc24, 'pcm24')).flag('noise_floor');
    expect(under).toMatchObject({ severity: 'note', evidence: { quiet_windows: 2, first_quiet_s: 2 } });
  });

  it('notes, and does not warn, where a machine coasts down to rest below what a 16-bit converter resolves, naming both causes', async () => {
    // Running at 5 m/s² RMS, then from 1.5 s an exponential coast-down (τ = 0.1 s), resting on the sensor's noise of 0.4 steps RMS.
    const hiss = gaussian(n, 0.4 * step16, 9);
    const x = onCodes(sine(n, fs, 97, 5 * Math.SQRT2).map((v, i) => v * (i < 1.5 * fs ? 1 : Math.exp(-(i - 1.5 * fs) / (0.1 * fs))) + hiss[i]), step16);
    // Seconds 3 and 4 lie at rest: their RMS straight from the samples, under the 2-step floor.
    expect(stdOf(x, 2 * fs, 3 * fs) / step16).toBeLessThan(2);
    expect(stdOf(x, 1 * fs, 2 * fs) / step16).toBeGreaterThan(2);
    const f = (await flagsOf(x, fs, acc16, 'pcm16')).flag('noise_floor');
    // Once a warning; a rest is an ordinary end of a test, so the windows at the floor are a note naming the stretch.
    expect(f).toMatchObject({ severity: 'note', evidence: { quiet_windows: 2, quiet_stretches: 1, first_quiet_s: 2, longest_quiet_end_s: 4 } });
    expect(f.message).toMatch(/a machine at rest, a load held or a quiet gap between events reads so, and so does a sensor that came loose or lost power/);
  });

  it('leaves a channel quiet throughout to the resolution flag: windows at the floor, none 20 dB above', async () => {
    const x = onCodes(gaussian(n, 3 * step16, 4).map((v, i) => (i < fs ? v : v / 3)), step16);
    const f = (await flagsOf(x, fs, acc16, 'pcm16')).flag('noise_floor');
    expect(f.severity).toBe('ok');
    expect(f.evidence.quiet_windows).toBe(3);
    expect(f.message).toMatch(/the others only \d+\.\d dB above it \(under 20 dB\): a channel quiet throughout/);
  });

  it('judges no window of a floating-point channel, which keeps no step', async () => {
    const x = running(3).map((v, i) => (i < n / 2 ? v : 0.01 * Math.sin(i)));
    const f = (await flagsOf(x, fs, channel({ scale, range: [-500, 500], max_frequency_hz: 3000 }), 'float32')).flag('noise_floor');
    expect(f).toMatchObject({ severity: 'ok', value: null });
    expect(f.message).toMatch(/^not judged: no noise_floor declared, and no converter step/);
  });
});

describe('windows held at a rail or at one value are named by the flags that judge them, not as a floor', () => {
  const fs = 8000, n = 4 * fs;

  it('a 24-bit channel railed for its last 2 s fails saturation; its declared floor is not said to be reached', async () => {
    // As an amplifier driven to its rail: the converter's top code from 2 s on (invented; the same under a declared floor).
    const scale = 50, decl = channel({ scale, range: [-50, 50], bits: 24, max_frequency_hz: 3000, noise_floor: 0.002 });
    const x = gaussian(n, 0.5, 17).map((v, i) => (i < n / 2 ? v : scale));
    const { flag } = await flagsOf(x, fs, decl, 'pcm24');
    expect(flag('saturation').severity).toBe('fail');
    const f = flag('noise_floor');
    expect(f).toMatchObject({ severity: 'ok', evidence: { windows: 4, quiet_windows: 0, held_windows: 2 } });
    expect(f.message).toMatch(/2 windows below it held at one value or at a rail, which the flatline, saturation or dropout flag names/);
    expect(f.message).not.toMatch(/comes and goes|machine at rest/);
    // Without a declared floor the converter's floor leaves it alone the same way.
    const undeclared = (await flagsOf(x, fs, channel({ scale, range: [-50, 50], bits: 24, max_frequency_hz: 3000 }), 'pcm24')).flag('noise_floor');
    expect(undeclared).toMatchObject({ severity: 'ok', evidence: { quiet_windows: 0, held_windows: 2 } });
  });

  it('a value stuck mid-range for a whole window is the flatline flag\'s stuck stretch', async () => {
    const scale = 500, step = scale / 2 ** 15;
    const x = onCodes(gaussian(n, 20, 19), step);
    x.fill(x[fs - 1], fs, 2 * fs);
    const { flag } = await flagsOf(x, fs, channel({ scale, range: [-500, 500], bits: 16, max_frequency_hz: 3000 }), 'pcm16');
    expect(flag('flatline').severity).toBe('warn');
    expect(flag('noise_floor')).toMatchObject({ severity: 'ok', evidence: { quiet_windows: 0, held_windows: 1 } });
  });

  it('tells one held value from one step off it over a whole window', () => {
    const step = 500 / 2 ** 15, finite = 48000, c = 12345 * step;
    expect(holdsOneValue(c * finite, c, finite, step)).toBe(true);
    // One sample a step below: the mean falls by step/finite under the peak.
    expect(holdsOneValue(c * finite - step, c, finite, step)).toBe(false);
    expect(holdsOneValue(0, 0, finite, step)).toBe(true);
  });
});

describe('windows joined from the fused pass\'s shorter ones', () => {
  it('give the sums, peaks, ends and finite counts that windows of the whole length give, fed in uneven chunks', () => {
    const fs = 1000, x = gaussian(10_500, 1, 23);
    x[2345] = NaN;
    const shared = new Map<string, Stage>();
    const ctx = {
      name: 'x', quantity: 'acceleration', unit: 'u', sampleRate: fs, range: null, bits: null, maxFrequencyHz: null, stepSize: null, fullScale: null,
      declared: true, declaredDurationS: null, timeSteps: () => null, note: () => {}, addRow: () => {}, flag: () => {}, evidence: () => {},
      shared: <T extends Stage>(k: string, make: () => T) => (shared.get(k) ?? shared.set(k, make()).get(k)) as T,
    } satisfies ChannelContext;
    const got: number[][] = [];
    // 1 s windows of 0.1 s parts, and 0.95 s asked of 0.1 s parts: the nearest whole number of parts, 1 s again.
    expect(joinedWindowsOf(ctx, 1000, 100, (sum, sq, peak, end, finite) => { got.push([sum, sq, peak, end, finite]); })).toBe(1000);
    expect(joinedLength(950, 100)).toBe(1000);
    expect(joinedLength(50, 100)).toBe(50);
    inChunks(x, (c) => { for (const s of shared.values()) s.push(c); });
    // Straight from the samples: each whole window's finite sum, sum of squares, largest magnitude, end and finite count.
    const want: number[][] = [];
    for (let w = 0; (w + 1) * 1000 <= x.length; w++) {
      let sum = 0, sq = 0, peak = 0, m = 0;
      for (let i = w * 1000; i < (w + 1) * 1000; i++) if (Number.isFinite(x[i])) { sum += x[i]; sq += x[i] * x[i]; peak = Math.max(peak, Math.abs(x[i])); m++; }
      want.push([sum, sq, peak, (w + 1) * 1000, m]);
    }
    expect(got.length).toBe(10);
    expect(got[2][4]).toBe(999);
    got.forEach((g, w) => g.forEach((v, k) => expect(v).toBeCloseTo(want[w][k], 9)));
  });
});
