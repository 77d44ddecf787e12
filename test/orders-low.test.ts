// Order figures of slow shafts (stages/orders.ts), through the real per-recording path (a float WAV on disk → reduceRecording):
// tones locked to orders 1, 2, 3.5 and 6 of a shaft, with white noise, held against their RMS, A/√2 (common practice), and
// against scipy's spectra integrated over the same bands (test/fixtures/make-order-vectors.py: scipy.signal.welch at the
// resolution quern's spectrum of every 16th sample has, and scipy.signal.periodogram of a recording shorter than a segment).
import { describe, expect, it } from 'vitest';
import type { ChannelDeclaration } from '../spec/archive.js';
import type { ReductionSpec } from '../spec/reduction.js';
import { hzName } from '../stages/names.js';
import { lowSpeedSpectrum } from '../stages/orders.js';
import { fixture, readJson } from './helpers.js';
import { reduceChannels } from './reduce-signal.js';
import { counterWhite } from './counter-noise.js';

interface Band { order: number; amplitude: number; rms: number }
interface Case { name: string; rpm_from: number; rpm_to: number; seconds: number; samples: number; first: number[]; last: number[]; bands: Band[] }
const ref = readJson(fixture('order-vectors.json'));
const FS: number = ref.fs;
const byName = (name: string): Case => ref.cases.find((c: Case) => c.name === name);

const TACHO: ChannelDeclaration = { name: 'tacho', quantity: 'voltage', unit: 'V', scale: 10, offset: 0, range: null, bits: null, max_frequency_hz: null, pulses_per_rev: 1, trigger_level: 2.5, trigger_hysteresis: 1 };
const ACC: ChannelDeclaration = { name: 'acc', quantity: 'acceleration', unit: 'm/s^2', scale: 10, offset: 0, range: null, bits: null, max_frequency_hz: null };
const SPEC: ReductionSpec = { spectrum: {}, orders: { orders: ref.orders, width: ref.width } };
const col = (n: number) => `order_${hzName(n)}_rms`;


/** The case's vibration channel and a tacho of one 5 V pulse a revolution (a tenth of it high), from the shaft angle in revolutions. */
function signals(c: Case): Float64Array[] {
  const f0 = c.rpm_from / 60, a = (c.rpm_to / 60 - f0) / c.seconds;
  const angle = (i: number) => f0 * (i / FS) + (a * (i / FS) ** 2) / 2;
  const acc = counterWhite(c.samples, ref.seed).map((v) => ref.noise * v);
  for (let i = 0; i < c.samples; i++) for (let k = 0; k < ref.orders.length; k++) acc[i] += ref.amplitudes[k] * Math.sin(2 * Math.PI * ref.orders[k] * angle(i) + ref.phases[k]);
  const tacho = Float64Array.from({ length: c.samples }, (_, i) => { const u = angle(i) + 0.3; return u - Math.floor(u) < 0.1 ? 5 : 0; });
  return [acc, tacho];
}

async function reduceCase(c: Case, spec = SPEC) {
  const [acc, tacho] = signals(c);
  // The signal is the script's, sample for sample.
  c.first.forEach((v, i) => expect(acc[i]).toBeCloseTo(v, 12));
  c.last.forEach((v, i) => expect(acc[c.samples - c.last.length + i]).toBeCloseTo(v, 12));
  const { row, result } = await reduceChannels([acc, tacho], [ACC, TACHO], FS, spec);
  return { acc: row('acc'), tacho: row('tacho'), notes: result.messages.join('\n') };
}

const relative = (got: number | null, want: number) => Math.abs((got as number) / want - 1);

describe('the finer spectrum the orders stage asks for', () => {
  it('at 25.6 kHz with the default segment: 65,536 samples a periodogram, from every 16th sample (the octave stage\'s key), for 120 rpm and up', () => {
    // Main lobe of Hann, 2 bins (Harris 1978): 2 × 25600 / 65536 = 0.78 Hz fits 0.5 order of 2 rev/s; orders to 6.5 × 25 Hz lie below fs/96.
    expect(lowSpeedSpectrum({ orders: [1, 2, 6], width: 0.5, min_rpm: 120, spectrum: { segment: 4096, overlap: 0.5, window: 'hann' } }, 25600)).toEqual({ segment: 4096, decimation: 16 });
    // None where the shared segment's lobe already fits the lowest speed asked for.
    expect(lowSpeedSpectrum({ orders: [1, 2, 6], width: 0.5, min_rpm: 1500, spectrum: { segment: 4096, overlap: 0.5, window: 'hann' } }, 25600)).toBeNull();
  });
});

describe('order figures of slow shafts, against the tones and scipy', () => {
  it.each(['steady 1480 rpm', 'steady 600 rpm'])('%s: every order is defined, within 0.2 % of A/√2 (the noise in the band) and 1e-5 of scipy.signal.welch at nperseg 65536 (the decimator, measured: 2e-6)', async (name) => {
    const c = byName(name);
    const { acc, tacho } = await reduceCase(c);
    expect(relative(tacho.speed_mean_rpm, c.rpm_from)).toBeLessThan(1e-4);
    for (const b of c.bands) {
      expect(relative(acc[col(b.order)], b.amplitude / Math.SQRT2), `order ${b.order}`).toBeLessThan(2e-3);
      expect(relative(acc[col(b.order)], b.rms), `order ${b.order}`).toBeLessThan(1e-5);
    }
    expect(tacho[col(1)]).toBeNull();
  }, 60_000);

  it('steady 1480 rpm without the finer spectrum (min_rpm above the shared segment\'s reach): null, with a note saying what would serve', async () => {
    const { acc, notes } = await reduceCase(byName('steady 1480 rpm'), { ...SPEC, orders: { ...SPEC.orders, min_rpm: 1500 } });
    for (const n of ref.orders) expect(acc[col(n)]).toBeNull();
    expect(notes).toMatch(/acc: order 1, 2, 3\.5, 6 bands of ±0\.5 orders \(12\.33 Hz at 1480\.0 rpm\) are narrower than the spectrum window's main lobe \(12\.50 Hz\); left empty \(null\); the shaft turns below the speeds the spectra serve/);
  }, 60_000);

  it('steady 1800 rpm is read from the shared spectrum as before: within 1e-7 of scipy.signal.welch at nperseg 4096 (measured: 3e-9)', async () => {
    const c = byName('steady 1800 rpm');
    const { acc } = await reduceCase(c);
    for (const b of c.bands) expect(relative(acc[col(b.order)], b.rms), `order ${b.order}`).toBeLessThan(1e-7);
  }, 60_000);

  it('a shaft sweeping 540 → 660 rpm: order 6 leaves its band and is null with a note; orders 1, 2, 3.5 stay within 1e-5 of scipy', async () => {
    const c = byName('swept 540-660 rpm');
    const { acc, notes } = await reduceCase(c);
    expect(acc[col(6)]).toBeNull();
    expect(notes).toMatch(/acc: order 6 not defined: the shaft speed ranged 54\d\.\d–6[56]\d\.\d rpm, moving the order beyond its ±0\.5-order band \(5\.00 Hz, less the window's main lobe of 0\.78 Hz\)/);
    for (const b of c.bands.filter((x) => x.order !== 6)) expect(relative(acc[col(b.order)], b.rms), `order ${b.order}`).toBeLessThan(1e-5);
  }, 60_000);

  it('600 rpm recorded for 0.35 s is too short for any spectrum: null, with the stretch that would do (0.4 s); 0.45 s does, within 0.1 % of scipy\'s periodogram and 1 % of A/√2', async () => {
    const long = byName('short 600 rpm');
    const short: Case = { ...long, seconds: 0.35, samples: Math.round(0.35 * FS), last: [] };
    const a = await reduceCase(short);
    for (const n of ref.orders) expect(a.acc[col(n)]).toBeNull();
    // Hann's main lobe, 2 bins, in a 5 Hz band: periodograms of 2 × 1600 / 5 = 640 samples at fs/16, 10,240 of the recording.
    expect(a.notes).toMatch(/acc: order 1, 2, 3\.5, 6 bands of ±0\.5 orders \(5\.00 Hz at 600\.0 rpm\) are narrower than the spectrum window's main lobe \(5\.71 Hz\); left empty \(null\); they need gap-free stretches of at least 10240 samples \(0\.4 s of recording; after a gap, up to \d+ more while the low-pass filter settles\)/);
    const b = await reduceCase(long);
    for (const band of long.bands) {
      expect(relative(b.acc[col(band.order)], band.rms), `order ${band.order}`).toBeLessThan(1e-3);
      expect(relative(b.acc[col(band.order)], band.amplitude / Math.SQRT2), `order ${band.order}`).toBeLessThan(1e-2);
    }
  }, 60_000);
});
