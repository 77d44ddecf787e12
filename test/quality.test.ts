// Data-quality flags against textbook facts and standards, and the planted defects of the sample archive.
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { ReductionSpec } from '../spec/reduction.js';
import { reduceRecording } from '../pipeline/reduce/compute.js';
import { encodeWav } from '../scripts/wav-file.js';
import { aliasOf } from '../stages/quality/aliasing.js';
import type { Flag } from '../stages/quality/flag.js';
import { peakUnderestimate } from '../stages/quality/peak-capture.js';
import { quantisationNoise } from '../stages/quality/resolution.js';
import { median } from '../stages/quality/spikes.js';
import { fixture, readJson, tempDir } from './helpers.js';
import { uniform } from './dsp-signals.js';

const channel = (over: Partial<ChannelDeclaration> = {}): ChannelDeclaration => ({ name: 'x', quantity: 'voltage', unit: 'V', scale: 10, offset: 0, range: null, bits: null, max_frequency_hz: null, ...over });

/** Reduces one signal through the real path; `pcm16` stores it as 16-bit codes (values in ±1 of full scale × scale). */
async function flagsOf(signal: Float64Array, fs: number, decl = channel(), { pcm16 = false, spec = {} as ReductionSpec, csv = null as string | null } = {}) {
  const path = join(tempDir(), csv ? 'x.csv' : 'x.wav');
  if (csv) writeFileSync(path, csv);
  else writeFileSync(path, encodeWav({ sampleRate: fs, channels: [signal.map((v) => (v - decl.offset) / decl.scale)], encoding: pcm16 ? 'pcm16' : 'float32' }));
  const r = await reduceRecording({ recording: 'x', path, group: 'g', format: null, sampleRate: csv ? null : null, layout: null, channels: [decl], labels: {}, durationS: null, spec, chunkFrames: 4096 });
  expect(r.reason).toBeUndefined();
  const q = r.quality[0];
  const flag = (name: string) => q.flags.find((f) => f.name === name) as Flag;
  return { row: r.rows[0] as Record<string, any>, flag, severity: q.severity, result: r };
}

describe('saturation', () => {
  it('a 0–3 V quantiser with integer steps reads 3 for 3.5, 4.5 and 5.5 V: those samples are saturated (common practice)', async () => {
    const quantise = (v: number) => Math.min(3, Math.max(0, Math.round(v)));
    const inputs = [0.6, 1.1, 2.4, 3.5, 4.5, 5.5, 2.0, 0.9, 1.6, 2.2];
    const { flag, row } = await flagsOf(Float64Array.from(inputs.map(quantise)), 10, channel({ range: [0, 3] }));
    expect(flag('saturation').evidence.samples).toBe(3);
    expect(flag('saturation').severity).toBe('fail'); // three in a row is a flat top
    expect(flag('saturation').message).toMatch(/retake the measurement with a larger range/);
    expect(row.saturation_fraction).toBeCloseTo(0.3, 12);
  });

  it('without a declared range, samples piled on the extreme 16-bit codes count; one stray touch only warns', async () => {
    const x = Float64Array.from({ length: 20000 }, (_, i) => 5 * Math.sin(i / 10));
    x[5000] = 10; // one sample at the most positive code (clipped to 32767/32768 of full scale)
    const { flag } = await flagsOf(x, 1000, channel(), { pcm16: true });
    expect(flag('saturation').evidence.samples).toBe(1);
    expect(flag('saturation').severity).toBe('warn');
  });
  // A 16-bit converter's codes run from −32768 to +32767 (two's complement, common practice): +full scale itself is no code,
  // so a channel declared with its range equal to the converter's full scale clips at 32767/32768 of it.
  it('a range declared as the converter\'s full scale: samples clipped at the most positive code count, as numpy counts code 32767', async () => {
    const fs = 1000, x = Float64Array.from({ length: 4000 }, (_, i) => 30 + 80 * Math.sin(2 * Math.PI * 5 * i / fs));
    const clipped = x.map((v) => Math.min(100, Math.max(-100, v)));
    const codes = clipped.map((v) => Math.max(-32768, Math.min(32767, Math.round((v / 100) * 32768))));
    const atTop = codes.filter((c) => c === 32767).length;
    expect(atTop).toBeGreaterThan(400);
    const { flag, row } = await flagsOf(clipped, fs, channel({ scale: 100, range: [-100, 100], bits: 16 }), { pcm16: true });
    expect(flag('saturation').evidence.samples).toBe(atTop);
    expect(flag('saturation').severity).toBe('fail');
    expect(flag('saturation').message).toMatch(/converter's extreme codes, where they lie inside it/);
    expect(row.saturation_fraction).toBeCloseTo(atTop / 4000, 12);
    // The negative side reaches −full scale itself: a signal clipped there counts the same way.
    const low = await flagsOf(clipped.map((v) => -v), fs, channel({ scale: 100, range: [-100, 100], bits: 16 }), { pcm16: true });
    expect(low.flag('saturation').evidence.samples).toBe(codes.map((c) => -c).filter((c) => c <= -32767).length);
  });
});

describe('saturation of a 24-bit converter in a 32-bit container', () => {
  // 24-bit codes stored in 32-bit PCM words (the code shifted up by 8 bits, common practice for 24-bit loggers): the most
  // positive code is 2^23 − 1, one 24-bit step short of full scale, far below the 32-bit container's own most positive code.
  const pcm32 = (codes24: Int32Array, fs: number) => {
    const data = Buffer.alloc(codes24.length * 4);
    codes24.forEach((c, i) => data.writeInt32LE(c * 256, i * 4));
    const fmt = Buffer.alloc(16);
    fmt.writeUInt16LE(1, 0); fmt.writeUInt16LE(1, 2); fmt.writeUInt32LE(fs, 4); fmt.writeUInt32LE(fs * 4, 8); fmt.writeUInt16LE(4, 12); fmt.writeUInt16LE(32, 14);
    const head = (id: string, n: number) => { const b = Buffer.alloc(8); b.write(id, 0, 'latin1'); b.writeUInt32LE(n, 4); return b; };
    const body = Buffer.concat([Buffer.from('WAVE'), head('fmt ', 16), fmt, head('data', data.length), data]);
    return Buffer.concat([head('RIFF', body.length), body]);
  };
  it('samples clipped at the 24-bit code 2^23 − 1 count with bits: 24 declared, with or without a range, as numpy counts them', async () => {
    const fs = 1000, top = 2 ** 23 - 1;
    const codes = Int32Array.from({ length: 4000 }, (_, i) => Math.max(-(2 ** 23), Math.min(top, Math.round(2 ** 23 * (0.3 + 0.9 * Math.sin(2 * Math.PI * 5 * i / fs))))));
    const atTop = codes.filter((c) => c === top).length;
    expect(atTop).toBeGreaterThan(400);
    for (const range of [null, [-500, 500]] as const) {
      const path = join(tempDir(), 'x.wav');
      writeFileSync(path, pcm32(codes, fs));
      const decl = channel({ scale: 500, bits: 24, range: range ? [...range] as [number, number] : null });
      const r = await reduceRecording({ recording: 'x', path, group: 'g', format: null, sampleRate: null, layout: null, channels: [decl], labels: {}, durationS: null, spec: {}, chunkFrames: 4096 });
      const sat = r.quality[0].flags.find((f) => f.name === 'saturation') as Flag;
      expect(sat.evidence.samples, `range ${range}`).toBe(atTop);
      expect(sat.severity).toBe('fail');
    }
  });
});

describe('aliasing (sampling theorem)', () => {
  it('all the power above the declared highest frequency: the message says the declared band holds under 1 % of it (no absurd percentage)', async () => {
    const fs = 12800, x = Float64Array.from({ length: fs * 2 }, (_, i) => Math.sin(2 * Math.PI * 3000 * i / fs));
    const f = (await flagsOf(x, fs, channel({ max_frequency_hz: 1000 }))).flag('aliasing');
    expect(f.severity).toBe('warn');
    expect(f.message).toMatch(/the declared band holds under 1 % of the power/);
    expect(f.message).not.toMatch(/Infinity|RMS reads/);
  });

  it('a 10 Hz tone sampled at 12 Hz appears at |10 − 12| = 2 Hz: declared 10 Hz content at 12 Hz sampling fails, reporting 2 Hz', async () => {
    expect(aliasOf(10, 12)).toBe(2);
    const x = Float64Array.from({ length: 120 }, (_, i) => Math.sin(2 * Math.PI * 10 * i / 12));
    const { flag, row } = await flagsOf(x, 12, channel({ max_frequency_hz: 10 }));
    expect(flag('aliasing').severity).toBe('fail');
    expect(row.alias_frequency_hz).toBe(2);
    expect(flag('aliasing').message).toMatch(/appears at 2 Hz/);
    // The samples really are those of a 2 Hz tone (with inverted phase): sin(2π·10·n/12) = −sin(2π·2·n/12).
    x.forEach((v, n) => expect(v).toBeCloseTo(-Math.sin(2 * Math.PI * 2 * n / 12), 9));
  });

  it('warns below 2.56 × the declared highest frequency (common practice), passes at or above it', async () => {
    const x = Float64Array.from({ length: 4096 }, (_, i) => Math.sin(i / 7));
    expect((await flagsOf(x, 2000, channel({ max_frequency_hz: 900 }))).flag('aliasing').severity).toBe('warn');
    expect((await flagsOf(x, 2560, channel({ max_frequency_hz: 1000 }))).flag('aliasing').severity).toBe('ok');
  });

  // A microphone on a 48 kHz delta-sigma converter, content declared to 20 kHz (the audio band, common practice): 48 / 20 = 2.4
  // falls short of the 2.56 common practice leaves an analogue anti-alias filter, but such converters' digital filters are flat
  // and alias-free to about 0.45 × fs (21.6 kHz here; data sheets give 0.40–0.45, from memory). Declared, the flag holds the
  // declared 20 kHz against 21.6 kHz.
  it('a declared alias-free bandwidth replaces the 2.56 × rule: a 48 kHz microphone to 20 kHz reads ok at 0.45, warns at 0.40', async () => {
    const fs = 48000, n = 48000;
    const x = Float64Array.from({ length: n }, (_, i) => [1000, 8000, 15000, 19500].reduce((sum, f, k) => sum + Math.sin(2 * Math.PI * f * i / fs + k) / (k + 1), 0));
    const mic = (over: Partial<ChannelDeclaration> = {}) => channel({ quantity: 'sound_pressure', unit: 'Pa', scale: 20, max_frequency_hz: 20000, ...over });
    const undeclared = (await flagsOf(x, fs, mic())).flag('aliasing');
    expect(undeclared.severity).toBe('warn');
    expect(undeclared.message).toMatch(/less than the 2.56 × common practice .* declare alias_free_fraction/);
    const flat = (await flagsOf(x, fs, mic({ alias_free_fraction: 0.45 }))).flag('aliasing');
    expect(flat.severity).toBe('ok');
    expect(flat.message).toMatch(/within the converter's alias-free bandwidth 21600 Hz/);
    expect(flat.evidence.alias_free_hz).toBeCloseTo(21600, 6);
    const narrow = (await flagsOf(x, fs, mic({ alias_free_fraction: 0.4 }))).flag('aliasing');
    expect(narrow.severity).toBe('warn');
    expect(narrow.message).toMatch(/above the converter's alias-free bandwidth 19200 Hz \(alias_free_fraction 0.4 × 48000 Hz\)/);
    // The sampling theorem still rules: content declared at or above fs/2 fails whatever the filter.
    expect((await flagsOf(x, fs, mic({ max_frequency_hz: 24000, alias_free_fraction: 0.5 }))).flag('aliasing').severity).toBe('fail');
  });

  // An invented bench's accelerometer declared to 1 kHz at fs 12.8 kHz: a 100 Hz tone, band noise to 1 kHz, and a 9 kHz tone the
  // anti-alias filter let through, which folds to |9000 − 12800| = 3800 Hz (common practice). The warning says where it sits.
  it('names the strongest line above the declared band: a 9 kHz tone folded to 3.8 kHz at fs 12.8 kHz, within one bin', async () => {
    const fs = 12800, n = 4 * fs, u = uniform(29);
    const x = Float64Array.from({ length: n }, (_, i) => 10 * Math.sin(2 * Math.PI * 100 * i / fs) + 8 * Math.sin(2 * Math.PI * 9000 * i / fs) + 0.5 * (u() - 0.5));
    const f = (await flagsOf(x, fs, channel({ quantity: 'acceleration', unit: 'm/s^2', scale: 500, max_frequency_hz: 1000 }), { pcm16: true })).flag('aliasing');
    const folded = aliasOf(9000, fs);
    expect(folded).toBe(3800);
    expect(f.severity).toBe('warn');
    expect(f.evidence.alias_hz).toBe(1000); // where the declared frequency itself lands, unchanged
    const resolution = f.evidence.spectrum_resolution_hz as number;
    expect(resolution).toBeCloseTo(fs / 4096, 9); // the shared spectrum's default 4096-point segment
    expect(Math.abs((f.evidence.strongest_above_band_hz as number) - folded)).toBeLessThanOrEqual(resolution);
    expect(f.message).toMatch(/its strongest line lies at 3800 Hz \(resolution 3\.125 Hz\), a component there or one folded from 9000 or 16600 Hz/);
    // A clean channel in its band: no line above it to name, though the evidence keeps the search's result.
    const clean = (await flagsOf(x.map((v, i) => v - 8 * Math.sin(2 * Math.PI * 9000 * i / fs)), fs, channel({ quantity: 'acceleration', unit: 'm/s^2', scale: 500, max_frequency_hz: 1000 }), { pcm16: true })).flag('aliasing');
    expect(clean.severity).toBe('ok');
    expect(clean.message).not.toMatch(/strongest line/);
  });

  it('warns when power crowds the top of the band below Nyquist', async () => {
    const fs = 1000;
    const x = Float64Array.from({ length: 40000 }, (_, i) => Math.sin(2 * Math.PI * 480 * i / fs) + 0.5 * Math.sin(2 * Math.PI * 50 * i / fs));
    const { flag } = await flagsOf(x, fs);
    expect(flag('aliasing').severity).toBe('warn');
    expect(flag('aliasing').message).toMatch(/may have folded/);
  });
});

describe('peak capture', () => {
  it('at 10 samples per cycle a sampled sine can miss its peak by 1 − cos(π/10) ≈ 4.9 % (derived from the sampling)', () => {
    expect(peakUnderestimate(10)).toBeCloseTo(1 - Math.cos(Math.PI / 10), 15);
    expect(peakUnderestimate(10)).toBeCloseTo(0.0489, 4);
    // Worst phase: the peak falls midway between two samples.
    const samples = Array.from({ length: 10 }, (_, n) => Math.cos(2 * Math.PI * (n + 0.5) / 10));
    expect(1 - Math.max(...samples)).toBeCloseTo(peakUnderestimate(10), 12);
  });

  it('judges the signal: a tone whose samples always straddle its crests warns, with the 4× true peak (ITU-R BS.1770-4 Annex 2) beside the sampled one', async () => {
    // 250 Hz at 1000 Hz, crests midway between samples: every sample reads cos(π/4) of the amplitude (derived).
    const x = Float64Array.from({ length: 4000 }, (_, n) => 3 * Math.cos(2 * Math.PI * (n + 0.5) / 4));
    const { flag, row } = await flagsOf(x, 1000, channel({ max_frequency_hz: 250 }));
    expect(row.samples_per_cycle).toBe(4);
    expect(row.peak_underestimate).toBeCloseTo(1 - Math.cos(Math.PI / 4), 12);
    expect(Math.abs(row.true_peak - 3) / 3).toBeLessThan(0.01);
    expect(row.peak_shortfall).toBeCloseTo(1 - Math.cos(Math.PI / 4), 2);
    expect(flag('peak_capture').severity).toBe('warn');
    expect(flag('peak_capture').message).toMatch(/peak and crest factor read that much low; use true_peak/);
  });

  it('the same tone at 2.56 samples per cycle, whose samples come near every crest over a recording, is no warning: the declared sampling alone is not a risk', async () => {
    const x = Float64Array.from({ length: 25600 }, (_, n) => 3 * Math.sin(2 * Math.PI * 1000 * n / 2560 + 0.2));
    const { flag, row } = await flagsOf(x, 2560, channel({ max_frequency_hz: 1000 }));
    expect(row.peak_underestimate).toBeCloseTo(peakUnderestimate(2.56), 12);
    expect(row.peak_shortfall).toBeLessThan(0.01);
    expect(flag('peak_capture').severity).toBe('ok');
  });
});

describe('resolution (IEEE Std 1241)', () => {
  it('ideal quantisation noise is LSB/√12: rounding a slow ramp leaves an error of that RMS', () => {
    const q = 0.01;
    const x = Array.from({ length: 200_000 }, (_, i) => i * 1.2345e-5);
    const err = x.map((v) => Math.round(v / q) * q - v);
    const rms = Math.sqrt(err.reduce((a, b) => a + b * b, 0) / err.length);
    expect(rms / quantisationNoise(q)).toBeCloseTo(1, 2);
  });

  it.each([[16], [12], [8]])('a full-scale sine on an ideal %i-bit converter has SNR 6.02·N + 1.76 dB', async (bits) => {
    const N = bits, fs = 10000, full = 2 ** (N - 1);
    // A full-scale sine, quantised to N bits, stored as 16-bit codes (the declared converter has N bits).
    const x = Float64Array.from({ length: fs * 4 }, (_, i) => (Math.round((full - 1) * Math.sin(2 * Math.PI * 97.3 * i / fs)) / full));
    const { row, flag } = await flagsOf(x.map((v) => v * 10), fs, channel({ bits: N }), { pcm16: true });
    // Our figure uses the ideal step noise, so it equals the textbook value for the signal's RMS: 20·log10((A/√2)/(q/√12)).
    expect(row.quantisation_snr_db).toBeCloseTo(6.0206 * N + 1.7609 + 20 * Math.log10((full - 1) / full), 1);
    expect(flag('resolution').severity).toBe('ok');
    expect(row.step_size).toBeCloseTo(10 / full, 12);
  });

  it.each([[45, 'ok'], [35, 'note'], [25, 'warn']])('a sine %i dB above ideal quantisation noise is %s (half a step at its peak: √1.5·10^(−SNR/20), derived)', async (snr, severity) => {
    const q = 10 / 32768, A = Math.SQRT2 * 10 ** (snr / 20) * q / Math.sqrt(12);
    const x = Float64Array.from({ length: 20000 }, (_, i) => Math.round(A * Math.sin(2 * Math.PI * 37.1 * i / 1000) / q) * q);
    const { flag, row } = await flagsOf(x, 1000, channel({ bits: 16 }), { pcm16: true });
    expect(row.quantisation_snr_db).toBeCloseTo(snr, 0);
    expect(flag('resolution').severity).toBe(severity);
  });

  it('a signal spanning a few steps is too coarse', async () => {
    const x = Float64Array.from({ length: 8000 }, (_, i) => Math.round(3 * Math.sin(i / 5)) / 32768 * 10);
    const { flag, row } = await flagsOf(x, 1000, channel({ bits: 16 }), { pcm16: true });
    expect(row.resolution_bits).toBeCloseTo(Math.log2(6), 9);
    expect(flag('resolution').severity).toBe('fail');
  });
});

describe('flatline, dropout, offset, spikes, declaration', () => {
  it('a channel sitting on one code is a dead sensor (fail)', async () => {
    const { flag } = await flagsOf(new Float64Array(5000).fill(2.5), 1000, channel({ bits: 16 }), { pcm16: true });
    expect(flag('flatline').severity).toBe('fail');
    expect(flag('flatline').message).toMatch(/dead or disconnected sensor/);
  });

  it('a channel of zeros from end to end fails flatline, and dropout defers to it in a note rather than claim lost data', async () => {
    const dead = await flagsOf(new Float64Array(5000), 1000, channel({ bits: 16 }), { pcm16: true });
    expect(dead.flag('flatline').severity).toBe('fail');
    expect(dead.flag('dropout').severity).toBe('note');
    expect(dead.flag('dropout').message).toMatch(/^exact zeros for the whole recording \(5 s\): no data were lost between samples: the channel never moved, which the flatline flag judges/);
    expect(dead.flag('dropout').message).not.toMatch(/lost data/);
    expect(dead.row.zero_run_s).toBe(5);
    // Zeros for 0.3 s inside a moving signal are still a logger's gap written as zeros.
    const gap = Float64Array.from({ length: 5000 }, (_, i) => (i >= 2000 && i < 2300 ? 0 : 1 + Math.sin(i / 7)));
    const lost = await flagsOf(gap, 1000, channel({ bits: 16 }), { pcm16: true });
    expect(lost.flag('dropout').severity).toBe('warn');
    expect(lost.flag('dropout').message).toMatch(/exact zeros for 0\.3 s ending at 2\.3 s: the logger lost data/);
  });

  it('missing CSV cells and a time gap are dropouts', async () => {
    const rows = Array.from({ length: 400 }, (_, i) => `${(i < 200 ? i : i + 50) / 100},${i % 150 === 5 ? '' : Math.sin(i)}`);
    const { flag, row } = await flagsOf(new Float64Array(0), 100, channel({ scale: 1 }), { csv: ['time,x', ...rows].join('\n') });
    // The time column skips 50 rows (0.51 s, 51 steps of 10 ms): 50 missing samples beside the 3 empty cells, of 450.
    expect(flag('dropout').severity).toBe('fail');
    expect(row.missing_fraction).toBeCloseTo(53 / 450, 12);
    expect(flag('dropout').message).toMatch(/53 samples missing \(11\.8 %\), first at 0\.05 s, the longest gap 0\.5 s ending at 2\.5 s/);
  });

  it('one missing sample in 5000 is a note; the figures cover the rest', async () => {
    const rows = Array.from({ length: 5000 }, (_, i) => `${i / 100},${i === 2500 ? '' : Math.sin(i / 7)}`);
    const { flag } = await flagsOf(new Float64Array(0), 100, channel({ scale: 1 }), { csv: ['time,x', ...rows].join('\n') });
    expect(flag('dropout').severity).toBe('note');
  });

  it('an offset warns where it raises RMS by 5 %: √(1 + r²) − 1 at r = |mean| / std (derived)', async () => {
    const sine = (mean: number) => Float64Array.from({ length: 10000 }, (_, i) => mean + Math.SQRT2 * Math.sin(2 * Math.PI * 50 * i / 1000));
    const acc = channel({ quantity: 'acceleration', unit: 'm/s^2' });
    const high = await flagsOf(sine(0.4), 1000, acc); // r = 0.4: RMS 7.7 % high
    expect(high.flag('offset').severity).toBe('warn');
    expect(high.flag('offset').message).toMatch(/RMS reads 7\.7\d* % high/);
    expect((await flagsOf(sine(0.25), 1000, acc)).flag('offset').severity).toBe('ok'); // 3.1 %
  });

  it('an accelerometer whose mean sits several standard deviations from zero warns; a voltage does not', async () => {
    const x = Float64Array.from({ length: 10000 }, (_, i) => 3 + Math.sin(i / 3));
    expect((await flagsOf(x, 1000, channel({ quantity: 'acceleration', unit: 'm/s^2' }))).flag('offset').severity).toBe('warn');
    expect((await flagsOf(x, 1000, channel())).flag('offset').severity).toBe('ok');
  });

  // Drift is a trend across the recording: the least-squares line through the 1 s means, against numpy.polyfit
  // (test/fixtures/make-offset-vectors.py). A ramp of d standard deviations adds d²/12 of the signal's variance (derived).
  describe('drift: a trend of the 1 s means, not their swing', () => {
    const ref = readJson(fixture('offset-vectors.json'));
    const { fs, seconds } = ref;
    const tone = (t: number) => 2 * Math.sin(2 * Math.PI * 7.3 * t);
    const signals: Record<string, (t: number) => number> = {
      'sine_0.2_hz': (t) => Math.sin(2 * Math.PI * 0.2 * t),
      'sine_0.5_hz': (t) => Math.sin(2 * Math.PI * 0.5 * t),
      linear: (t) => tone(t) + 3 * (t / seconds - 0.5),
      thermal: (t) => tone(t) + 3 * (1 - Math.exp(-t / 15)) - 3 * (1 - (15 / seconds) * (1 - Math.exp(-seconds / 15))),
      step: (t) => tone(t) + (t < seconds / 2 ? -1.25 : 1.25),
    };
    const acc = channel({ quantity: 'acceleration', unit: 'm/s^2', scale: 1 });
    const reduce = (name: string) => flagsOf(Float64Array.from({ length: fs * seconds }, (_, i) => signals[name](i / fs)), fs, acc);

    it.each(['sine_0.2_hz', 'sine_0.5_hz'])('a clean %s acceleration over 60 s swings its 1 s means both ways around no trend: ok', async (name) => {
      const { flag, row } = await reduce(name);
      expect(flag('offset').severity).toBe('ok');
      expect(row.drift_ratio).toBeCloseTo(ref.cases[name].drift_ratio, 6);
      expect(row.drift_ratio).toBeLessThan(0.3);
      expect(flag('offset').evidence.trend_rise as number).toBeCloseTo(ref.cases[name].rise, 6);
    });

    it.each(['linear', 'thermal', 'step'])('a %s drift of the mean warns, with the RMS excess over the signal without its drift (numpy)', async (name) => {
      const { flag, row } = await reduce(name);
      const want = ref.cases[name];
      expect(flag('offset').severity).toBe('warn');
      expect(row.offset_ratio).toBeLessThan(0.32); // the drift warns, not the mean
      expect(row.drift_ratio).toBeCloseTo(want.drift_ratio, 6);
      expect(flag('offset').message).toMatch(/the 1 s means rise by .* along a straight line across the recording/);
      const said = Number(/RMS reads ([\d.]+) % high/.exec(flag('offset').message)![1]) / 100;
      // The slow part (a level, a line and one step of the 1 s means) takes a ramp and a step whole, and a curve more than its
      // line alone takes: the figure lies between numpy's excess with the line removed and with the planted drift removed.
      expect(said).toBeLessThanOrEqual(want.rms_excess_planted + 0.001);
      expect(said).toBeGreaterThanOrEqual(want.rms_excess_line_removed - 0.001);
      expect(want.rms_excess_planted - said).toBeLessThan(name === 'thermal' ? 0.012 : 0.002);
    });
  });

  it('takes medians by quickselect that agree with sorting', () => {
    let seed = 9;
    const rnd = () => ((seed = (seed * 16807) % 2147483647) / 2147483647);
    for (const n of [1, 2, 3, 10, 11, 1000, 1001]) {
      const v = Float64Array.from({ length: n }, () => Math.round(rnd() * 50)); // with ties
      const sorted = Array.from(v).sort((a, b) => a - b);
      const expected = n % 2 ? sorted[n >> 1] : (sorted[n / 2 - 1] + sorted[n / 2]) / 2;
      expect(median(v)).toBe(expected);
    }
  });

  it('counts isolated spikes in noise, but not a ringing impact (Hampel: 1.4826 × MAD)', async () => {
    let seed = 1;
    const rnd = () => ((seed = (seed * 16807) % 2147483647) / 2147483647) - 0.5;
    const x = Float64Array.from({ length: 50000 }, () => rnd());
    for (const at of [1000, 20000, 33333]) x[at] = 8;
    for (let i = 0; i < 60; i++) x[40000 + i] += 9 * Math.exp(-i / 15) * Math.sin(2 * Math.PI * i / 3.7); // a ringing impact
    const { row, flag } = await flagsOf(x, 10000, channel());
    expect(row.spike_count).toBe(3);
    expect(flag('spikes').evidence.first_s).toBeCloseTo(0.1, 12);
  });

  it('a duration off its declaration is a note; an undeclared channel is said, not flagged', async () => {
    const path = join(tempDir(), 'y.wav');
    writeFileSync(path, encodeWav({ sampleRate: 100, channels: [new Float64Array(500).map((_, i) => Math.sin(i))] }));
    const r = await reduceRecording({ recording: 'y', path, group: 'g', format: null, sampleRate: null, layout: null, channels: null, labels: {}, durationS: 10, spec: {}, chunkFrames: 64 });
    const f = r.quality[0].flags.find((x) => x.name === 'declaration')!;
    expect(f.severity).toBe('note');
    expect(f.message).toMatch(/not declared/);
    expect(f.message).toMatch(/lasts 5 s but 10 s is declared/);
    const r2 = await reduceRecording({ recording: 'y', path, group: 'g', format: null, sampleRate: null, layout: null, channels: null, labels: {}, durationS: 5, spec: {}, chunkFrames: 64 });
    expect(r2.quality[0].flags.find((x) => x.name === 'declaration')!.severity).toBe('ok');
  });
});
