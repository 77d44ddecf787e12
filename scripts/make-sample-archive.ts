// Generates sample-archive/: an invented pump endurance rig, a week of nightly captures, with planted defects.
// Deterministic: the same script always writes the same bytes. Usage: node dist/scripts/make-sample-archive.js [folder]
import { mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { encodeWav } from './wav-file.js';

/** mulberry32: a small seeded generator, so the demo is the same on every machine. */
function random(seed: number) {
  let a = seed >>> 0;
  const uniform = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const gauss = () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
  return { uniform, gauss };
}

const SHAFT_HZ = 2970 / 60; // 49.5 Hz
const VANES = 6;
const BPFO = 3.58 * SHAFT_HZ; // outer-race defect rate of the drive-end bearing
const RESONANCE_HZ = 3500; // structural resonance the bearing impacts ring

/**
 * Bearing-housing acceleration in m/s²: shaft and vane-pass tones, noise, and, when damaged, the outer-race defect: its rate and
 * harmonics (177, 354, … 886 Hz) growing with the damage, and impacts at that rate ringing a resonance.
 */
function acceleration(fs: number, seconds: number, seed: number, damage: number, burst = 0): Float64Array {
  const r = random(seed);
  const n = Math.round(fs * seconds);
  const x = new Float64Array(n);
  const defect = Array.from({ length: 5 }, (_, k) => ({ f: (k + 1) * BPFO, a: 0.25 * damage * 0.8 ** k, phase: 0.7 * k }));
  for (let i = 0; i < n; i++) {
    const t = i / fs;
    x[i] = 2.0 * Math.sin(2 * Math.PI * SHAFT_HZ * t + 0.3) + 3.0 * Math.sin(2 * Math.PI * VANES * SHAFT_HZ * t) + 0.8 * r.gauss();
    if (damage > 0) for (const d of defect) x[i] += d.a * Math.sin(2 * Math.PI * d.f * t + d.phase);
  }
  if (damage > 0) {
    for (let k = 0, t0 = 0.002; t0 < seconds; k++, t0 = 0.002 + k / BPFO) {
      const amp = damage * (0.7 + 0.3 * r.uniform()) + (burst > 0 && k % 7 === 0 ? burst : 0);
      for (let i = Math.ceil(t0 * fs); i < n && i / fs < t0 + 0.01; i++) {
        const tau = i / fs - t0;
        x[i] += amp * Math.exp(-tau / 0.0015) * Math.sin(2 * Math.PI * RESONANCE_HZ * tau);
      }
    }
  }
  return x;
}

/** A 5 V once-per-revolution pulse at τ seconds into the revolution: high for 10 % of it, raised-cosine edges of 0.4 ms. */
function tachoPulse(tau: number, edgeS = 0.0004): number {
  const fall = 0.1 / SHAFT_HZ;
  if (tau < edgeS) return 2.5 * (1 - Math.cos((Math.PI * tau) / edgeS));
  if (tau < fall) return 5;
  if (tau < fall + edgeS) return 2.5 * (1 + Math.cos((Math.PI * (tau - fall)) / edgeS));
  return 0;
}

/**
 * Low-pass by a Blackman-windowed sinc of `taps` taps with its cutoff at `cutoff` × fs: a stand-in for a delta-sigma
 * converter's digital filter, flat to about 0.45 × fs, so that the demo's 24-bit noise does not crowd the top of the band.
 */
function lowPass(x: Float64Array, cutoff = 0.47, taps = 127): Float64Array {
  const h = Float64Array.from({ length: taps }, (_, k) => {
    const m = k - (taps - 1) / 2;
    const sinc = m === 0 ? 2 * cutoff : Math.sin(2 * Math.PI * cutoff * m) / (Math.PI * m);
    return sinc * (0.42 - 0.5 * Math.cos((2 * Math.PI * k) / (taps - 1)) + 0.08 * Math.cos((4 * Math.PI * k) / (taps - 1)));
  });
  const y = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) {
    let s = 0;
    for (let k = 0; k < taps; k++) { const j = i - k + (taps - 1) / 2; if (j >= 0 && j < x.length) s += h[k] * x[j]; }
    y[i] = s;
  }
  return y;
}

const clip = (x: Float64Array, lo: number, hi: number) => x.map((v) => Math.min(hi, Math.max(lo, v)));
const toFullScale = (x: Float64Array, scale: number, offset = 0) => x.map((v) => (v - offset) / scale);

export function makeSampleArchive(root: string): void {
  rmSync(root, { recursive: true, force: true });
  const put = (rel: string, data: Buffer | string) => {
    mkdirSync(dirname(join(root, rel)), { recursive: true });
    writeFileSync(join(root, rel), data);
  };
  const FS = 12800, SECONDS = 4;
  const n = FS * SECONDS;
  for (let night = 0; night < 7; night++) {
    const day = 16 + night;
    const date = `2026-11-${day}`;
    const r = random(1000 + night);
    // The drive-end bearing is sound for the first three nights, then degrades; on the 19th a loose mount also rattles hard enough
    // to clip. The non-drive end, across the casing, feels an eighth of it.
    const damage = night < 3 ? 0 : 6 * (night - 2);
    const accDe = acceleration(FS, SECONDS, 10 + night, damage, night === 3 ? 900 : 0);
    const accNde = acceleration(FS, SECONDS, 20 + night, damage / 8);
    const mic = new Float64Array(n).map((_, i) => 0.6 * Math.sin(2 * Math.PI * VANES * SHAFT_HZ * i / FS) + 0.2 * r.gauss());
    // Discharge pressure, bar; on the 21st the transducer cable is off and the channel sits at a constant code.
    const pressure = night === 5 ? new Float64Array(n).fill(8.0) : new Float64Array(n).map((_, i) => 6.2 + 0.05 * Math.sin(2 * Math.PI * VANES * SHAFT_HZ * i / FS) + 0.01 * r.gauss());
    // Tachometer: one 5 V pulse per revolution, 10 % duty, its edges rounded by the sensor and the anti-alias filter.
    const tacho = new Float64Array(n).map((_, i) => tachoPulse((((i / FS) * SHAFT_HZ) % 1) / SHAFT_HZ));
    const wav = encodeWav({
      sampleRate: FS,
      origination: new Date(Date.UTC(2026, 10, day, 2, 0, 0)),
      channels: [toFullScale(clip(accDe, -500, 500), 500), toFullScale(accNde, 500), toFullScale(mic, 200), toFullScale(pressure, 8, 8), toFullScale(tacho, 10)],
    });
    // The last night's copy was interrupted: the header promises more data than the file holds.
    put(`nightly/${date}/pump-endurance.wav`, night === 6 ? wav.subarray(0, Math.floor(wav.length * 0.6)) : wav);
  }
  // A retake saved under a name no group expects: quern must report it, not skip it silently.
  put('nightly/2026-11-19/pump-endurance-retake.wav', encodeWav({ sampleRate: FS, channels: [toFullScale(acceleration(FS, 0.5, 99, 8), 500)] }));
  // A quick-look capture at 2 kHz of a signal with content up to 5 kHz: the 3.5 kHz ringing folds to 500 Hz.
  put('quicklook/2026-11-18_quicklook.wav', encodeWav({ sampleRate: 2000, origination: new Date(Date.UTC(2026, 10, 18, 14, 30, 0)), channels: [toFullScale(acceleration(2000, 4, 77, 8), 500)] }));
  // The test cell's sound, a 48 kHz 24-bit recorder: a microphone by the pump, content to 20 kHz (the converter is flat and
  // alias-free to 0.45 × fs, as declared), and a spare microphone whose cable is unplugged: it reads only the chain's noise
  // (0.2 mPa RMS), a few dozen converter steps wide, which the flatline flag never sees and the declared noise floor does.
  {
    const fs = 48000, frames = fs * 2, rc = random(11);
    const hiss = (rms: number) => lowPass(new Float64Array(frames).map(() => rms * rc.gauss()));
    const tones = Array.from({ length: 40 }, (_, k) => ({ f: 100 * 190 ** (k / 39), a: 0.05 / Math.sqrt(1 + k), phase: 2 * Math.PI * rc.uniform() }));
    const chain = hiss(0.0002), noise = hiss(0.01);
    const pump = new Float64Array(frames).map((_, i) => {
      const t = i / fs;
      let v = 0.4 * Math.sin(2 * Math.PI * VANES * SHAFT_HZ * t) + noise[i] + chain[i];
      for (const tone of tones) v += tone.a * Math.sin(2 * Math.PI * tone.f * t + tone.phase);
      return v;
    });
    const spare = hiss(0.0002);
    put('cell-sound/2026-11-20_cell-sound.wav', encodeWav({ sampleRate: fs, encoding: 'pcm24', origination: new Date(Date.UTC(2026, 10, 20, 2, 5, 0)), channels: [toFullScale(pump, 20), toFullScale(spare, 20)] }));
  }
  // A handheld logger's export: comment lines, semicolons, decimal commas, a time column in seconds.
  {
    const fs = 2560, rows = fs * 2, rx = random(5), lines = ['# handheld vibration logger export (demo)', '# point: pump P3 drive-end housing', 'time;acc_x;acc_y'];
    for (let i = 0; i < rows; i++) {
      const t = i / fs;
      const ax = 1.8 * Math.sin(2 * Math.PI * SHAFT_HZ * t) + 2.5 * Math.sin(2 * Math.PI * VANES * SHAFT_HZ * t) + 0.5 * rx.gauss();
      const ay = 1.2 * Math.sin(2 * Math.PI * SHAFT_HZ * t + 1) + 0.5 * rx.gauss();
      lines.push([t.toFixed(6), ax.toFixed(4), ay.toFixed(4)].map((s) => s.replace('.', ',')).join(';'));
    }
    put('handheld/2026-11-20_spot-check.csv', lines.join('\r\n') + '\r\n');
  }
  // Frame strain from a separate data logger: raw big-endian int16, 2 channels, a 32-byte header of its own.
  {
    const fs = 500, frames = fs * 20, rs = random(7);
    const b = Buffer.alloc(32 + frames * 4);
    b.write('STRAIN-LOG demo 2ch int16 BE', 0, 'latin1');
    for (let i = 0; i < frames; i++) {
      const t = i / fs;
      const a = 120 + 40 * Math.sin(2 * Math.PI * 0.5 * t) + 15 * Math.sin(2 * Math.PI * SHAFT_HZ * t) + 2 * rs.gauss();
      const c = -60 + 25 * Math.sin(2 * Math.PI * 0.5 * t + 0.4) + 2 * rs.gauss();
      b.writeInt16BE(Math.round((a / 2000) * 32768), 32 + i * 4);
      b.writeInt16BE(Math.round((c / 2000) * 32768), 34 + i * 4);
    }
    put('strain/2026-11-17_frame-strain.bin', b);
  }
  put('archive.yaml', ARCHIVE_YAML);
  put('README.md', README);
}

const ACC = (name: string) => `      - { name: ${name}, quantity: acceleration, unit: m/s^2, scale: 500, range: [-500, 500], bits: 16, max_frequency_hz: 5000 }`;

const ARCHIVE_YAML = `# Pump endurance rig P3: an invented demo scenario (see README.md).
description: Pump endurance rig P3, nightly captures 2026-11-16 to 2026-11-22.
groups:
  - name: nightly
    match: "nightly/*/pump-endurance.wav"
    sample_rate: 12800
    labels: { rig: P3, test_id: endurance-07 }
    channels:
${ACC('acc_de')}
${ACC('acc_nde')}
      - { name: mic, quantity: sound_pressure, unit: Pa, scale: 200, range: [-200, 200], bits: 16, max_frequency_hz: 5000 }
      - { name: pressure, quantity: pressure, unit: bar, scale: 8, offset: 8, range: [0, 16], bits: 16, max_frequency_hz: 1000 }
      - { name: tacho, quantity: voltage, unit: V, scale: 10, range: [-10, 10], bits: 16, max_frequency_hz: 2500, pulses_per_rev: 1 }
  - name: quick-look
    match: "quicklook/*.wav"
    sample_rate: 2000
    labels: { rig: P3, test_id: endurance-07 }
    channels:
${ACC('acc_de')}
  - name: cell-sound
    match: "cell-sound/*.wav"
    sample_rate: 48000
    labels: { rig: P3, test_id: endurance-07 }
    channels:
      - { name: mic_pump, quantity: sound_pressure, unit: Pa, scale: 20, bits: 24, max_frequency_hz: 20000, alias_free_fraction: 0.45, noise_floor: 0.0002 }
      - { name: mic_spare, quantity: sound_pressure, unit: Pa, scale: 20, bits: 24, max_frequency_hz: 20000, alias_free_fraction: 0.45, noise_floor: 0.0002 }
  - name: handheld
    match: "handheld/*.csv"
    labels: { rig: P3, test_id: spot-check }
    channels:
      - { name: acc_x, quantity: acceleration, unit: m/s^2, range: [-160, 160], max_frequency_hz: 1000 }
      - { name: acc_y, quantity: acceleration, unit: m/s^2, range: [-160, 160], max_frequency_hz: 1000 }
  - name: frame-strain
    match: "strain/*.bin"
    format: raw
    sample_rate: 500
    layout: { sample_type: int16, byte_order: big, channels: 2, header_bytes: 32 }
    labels: { rig: P3, test_id: endurance-07 }
    channels:
      - { name: strain_a, quantity: strain, unit: µm/m, scale: 2000, range: [-2000, 2000], bits: 16, max_frequency_hz: 100 }
      - { name: strain_b, quantity: strain, unit: µm/m, scale: 2000, range: [-2000, 2000], bits: 16, max_frequency_hz: 100 }
`;

const README = `# Sample archive: pump endurance rig P3 (invented)

A demo archive made by \`scripts/make-sample-archive.ts\` (run \`npm run make-sample\`); every value is synthetic.
A centrifugal pump runs at 2970 rpm (49.5 Hz, six vanes) on an endurance rig; each night at 02:00 the rig
captures 4 s of five channels at 12.8 kHz: drive-end and non-drive-end bearing-housing accelerometers, a microphone,
the discharge pressure and a once-per-revolution tachometer pulse. The drive-end bearing is sound for the first three
nights, then its outer race degrades: tones at the outer-race defect rate (about 177 Hz) and its harmonics grow, and the
impacts ring a 3.5 kHz resonance, so the drive-end envelope and band figures climb night after night.

Planted defects, for quern to catch:
- \`nightly/2026-11-19\`: acc_de clips at its instrument range (±500 m/s²) under a loose-mount rattle.
- \`nightly/2026-11-21\`: the pressure transducer is disconnected; the channel is flat.
- \`nightly/2026-11-22\`: the file was cut short while being copied; the header promises more data.
- \`nightly/2026-11-19/pump-endurance-retake.wav\`: a retake under a name no group matches.
- \`quicklook/2026-11-18_quicklook.wav\`: sampled at 2 kHz although the signal holds content to 5 kHz, so the
  3.5 kHz ringing aliases to 500 Hz.
- \`cell-sound/2026-11-20_cell-sound.wav\`: the test cell's sound at 48 kHz, 24-bit; the spare microphone's cable is
  unplugged, so mic_spare reads only the measurement chain's own noise (its declared noise floor).
- \`handheld/2026-11-20_spot-check.csv\`: a handheld logger's export (semicolons, decimal commas, time column).
- \`strain/2026-11-17_frame-strain.bin\`: raw big-endian 16-bit frames with a 32-byte header.
`;

if (import.meta.url === `file://${process.argv[1]}`) {
  const target = resolve(process.argv[2] ?? 'sample-archive');
  makeSampleArchive(target);
  process.stdout.write(`wrote ${target}\n`);
}
