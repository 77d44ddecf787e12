// A channel whose every sample is missing (a float WAV channel all NaN, a CSV column of empty cells) has no figure of its
// signal: its figures are null, not the 0 an average, a peak search or a count starts from, in features.parquet and the
// exports; the schema says they may be; and the flags that judge the signal say it has no finite samples, leaving the
// failure to the dropout flag. A channel half missing keeps its figures, those of its finite half.
// What a figure of no samples is: undefined (numpy: np.nanmax of an all-NaN array is NaN with a warning; common practice);
// a count of what was not looked for is no count of 0 (common practice: SQL's NULL for an unknown, not a zero).
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { DuckDBInstance } from '@duckdb/node-api';
import { parse } from 'csv-parse/sync';
import { beforeAll, describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { quern, readJson, repo, tempDir } from './helpers.js';

const FS = 2000, N = 4 * FS;
const t = (i: number) => i / FS;
/** Missing over the recording's first half, as a logger that came back halfway through leaves it. */
const firstHalfLost = (x: Float64Array) => x.map((v, i) => (i < N / 2 ? NaN : v));
/** A tacho's pulses: 10 samples high in every 80 (25 Hz, 1500 rpm at one pulse a revolution). */
const pulses = Float64Array.from({ length: N }, (_, i) => (i % 80 < 10 ? 5 : 0));

/** The figures that count or measure what a search of the samples found: null with no finite sample, a number otherwise. */
const SEARCHED = ['flatline_run_s', 'zero_run_s', 'spike_count'];
/** The channels with no finite sample: float WAV channels of NaN, and a CSV column of empty cells. */
const LOST = ['lost', 'strain_lost', 'tacho_lost', 'acc_gone'];
/** What such a channel keeps: what the file and the declaration say (its name, rate, length, the missing count and share). */
const KEPT = ['recording', 'group', 'channel', 'quantity', 'unit', 'sample_rate', 'n', 'duration_s', 'start_time', 'quality', 'flags', 'n_nonfinite', 'missing_fraction', 'alias_margin', 'alias_frequency_hz', 'samples_per_cycle', 'peak_underestimate'];

describe('a channel with no finite samples', () => {
  let out = '';
  let rows: Record<string, unknown>[] = [];
  const row = (channel: string) => rows.find((r) => r.channel === channel)!;
  beforeAll(async () => {
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive);
    const strain = ', range: [-500, 500], bits: 16, noise_floor: 0.5';
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: bench\n    match: "*.wav"\n    channels:\n'
      + '      - { name: acc, quantity: acceleration, unit: m/s^2, max_frequency_hz: 500 }\n'
      + '      - { name: lost, quantity: voltage, unit: V, max_frequency_hz: 500 }\n'
      + '      - { name: half, quantity: acceleration, unit: m/s^2, max_frequency_hz: 500 }\n'
      + `      - { name: strain_lost, quantity: strain, unit: µm/m, max_frequency_hz: 500${strain} }\n`
      + `      - { name: strain_half, quantity: strain, unit: µm/m, max_frequency_hz: 500${strain} }\n`
      + '      - { name: tacho_lost, quantity: voltage, unit: V, max_frequency_hz: 500, pulses_per_rev: 1 }\n'
      + '      - { name: tacho_half, quantity: voltage, unit: V, max_frequency_hz: 500, pulses_per_rev: 1 }\n'
      + '  - name: handheld\n    match: "*.csv"\n    sample_rate: 2000\n    channels:\n'
      + '      - { name: acc_x, quantity: acceleration, unit: m/s^2, max_frequency_hz: 500 }\n'
      + '      - { name: acc_gone, quantity: acceleration, unit: m/s^2, max_frequency_hz: 500 }\n');
    const tone = Float64Array.from({ length: N }, (_, i) => 0.5 * Math.sin(2 * Math.PI * 50 * t(i)));
    const lost = new Float64Array(N).fill(NaN);
    // 5 Hz of 100 µm/m on the strain: over its finite 2 s, 10 whole cycles of range 200.
    const sway = Float64Array.from({ length: N }, (_, i) => 100 * Math.cos(2 * Math.PI * 5 * t(i)));
    writeFileSync(join(archive, 'run-1.wav'), encodeWav({
      sampleRate: FS, encoding: 'float32', origination: new Date(Date.UTC(2026, 3, 1, 8)),
      channels: [tone, lost, firstHalfLost(tone), lost, firstHalfLost(sway), lost, firstHalfLost(pulses)],
    }));
    // A CSV column whose every cell is empty.
    writeFileSync(join(archive, 'spot.csv'), `acc_x,acc_gone\n${Array.from(tone, (v) => `${v.toFixed(6)},\n`).join('')}`);
    out = join(archive, '..', 'out');
    expect(quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv,xlsx').code).toBe(0);
    const db = await (await DuckDBInstance.create()).connect();
    rows = (await db.runAndReadAll(`select * from '${join(out, 'features.parquet')}' order by channel`)).getRowObjectsJS() as Record<string, unknown>[];
  });

  it('reads true_peak, max_twrms_125ms and max_twrms_1000ms as null (DuckDB\'s reading of features.parquet), the tone beside it as numbers', () => {
    const lost = row('lost'), acc = row('acc');
    expect(Number(lost.n_nonfinite)).toBe(N);
    for (const c of ['true_peak', 'max_twrms_125ms', 'max_twrms_1000ms', 'rms', 'peak', 'mean']) expect(lost[c], c).toBeNull();
    // The tone's slow-weighted maximum settles on its RMS, A/√2 (IEC 61672-1 time weighting of a steady sine), within the 4 s.
    expect(acc.max_twrms_1000ms as number).toBeCloseTo(0.5 / Math.SQRT2, 2);
    expect(acc.true_peak as number).toBeGreaterThan(0.49);
  });

  it('exports those as empty cells', () => {
    const [head, ...lines] = parse(readFileSync(join(out, 'features.csv'), 'utf8'), { record_delimiter: '\r\n' }) as string[][];
    const names = head.map((h) => h.replace(/ \[.*\]$/, ''));
    const lost = lines.find((l) => l[names.indexOf('channel')] === 'lost')!;
    for (const c of ['true_peak', 'max_twrms_125ms', 'max_twrms_1000ms', ...SEARCHED]) expect(lost[names.indexOf(c)], c).toBe('');
    // The half-missing tone's searches are numbers there too.
    const half = lines.find((l) => l[names.indexOf('channel')] === 'half')!;
    for (const c of SEARCHED) expect(half[names.indexOf(c)], c).toMatch(/^\d/);
  });

  it('has every column that is null for it described as nullable in schemas/features.table.json', () => {
    const schema = readJson(join(repo, 'schemas', 'features.table.json'));
    const described = (name: string) => schema.columns.find((s: any) => s.name !== '<label>' && new RegExp(`^(${s.name.split(', ').map((n: string) => n.replace(/<[^>]+>/g, '.+')).join('|')})$`).test(name));
    for (const channel of LOST) {
      const lost = row(channel);
      const nulls = Object.keys(lost).filter((c) => lost[c] === null && c !== 'start_time');
      expect(nulls.length, channel).toBeGreaterThan(10);
      for (const c of nulls) expect(described(c)?.type ?? `${c} not described`, `${channel}.${c}`).toMatch(/nullable/);
    }
  });

  it('gives, walking every column of each such channel, a number only for what the file and the declaration say, not the signal', () => {
    for (const channel of LOST) {
      const lost = row(channel);
      const numbers = Object.keys(lost).filter((c) => lost[c] !== null && !KEPT.includes(c));
      expect(numbers, channel).toEqual([]);
      expect(Number(lost.n_nonfinite), channel).toBe(N);
      expect(lost.missing_fraction, channel).toBe(1);
      // The declaration's figures stay: 2000 Hz over a declared 500 Hz, and 1 − cos(π·500/2000) (the README's worst case for a sine).
      expect(lost.samples_per_cycle, channel).toBe(4);
      expect(lost.peak_underestimate as number, channel).toBeCloseTo(1 - Math.cos(Math.PI / 4), 12);
    }
    // Each column that once read 0 there, now null: the searches, and the flags' and stages' counts of what a search finds.
    for (const channel of LOST) for (const c of SEARCHED) expect(row(channel)[c], `${channel}.${c}`).toBeNull();
    expect(row('strain_lost').saturation_fraction).toBeNull();
    expect(row('strain_lost').cycles_total).toBeNull();
    for (const c of ['revolutions', 'pulses_missing', 'pulses_extra', 'pulse_coverage']) expect(row('tacho_lost')[c], c).toBeNull();
  });

  it('keeps the figures of a channel half missing: those of its finite half', () => {
    for (const channel of ['half', 'strain_half', 'tacho_half']) {
      expect(Number(row(channel).n_nonfinite), channel).toBe(N / 2);
      expect(row(channel).missing_fraction, channel).toBe(0.5);
      for (const c of SEARCHED) expect(row(channel)[c], `${channel}.${c}`).toEqual(expect.any(Number));
    }
    // A clean tone: no spike, no stretch of repeats (float32 samples of a 50 Hz sine at 2000 Hz repeat none), no zeros.
    expect(row('half').spike_count).toBe(0);
    // Its RMS over the finite half, A/√2 (numpy: np.sqrt(np.nanmean(x**2)) of a whole number of cycles; common practice).
    expect(row('half').rms as number).toBeCloseTo(0.5 / Math.SQRT2, 6);
    // A cosine of amplitude A over N whole cycles counts N cycles of range 2A (ASTM E1049-85 §5.4.4 applied to it, derived).
    expect(row('strain_half').cycles_total).toBe(10);
    expect(row('strain_half').range_max as number).toBeCloseTo(200, 3);
    expect(row('strain_half').saturation_fraction).toBe(0);
    // 25 pulses a second over the finite 2 s: 1500 rpm, some 49 good intervals, none missing.
    expect(row('tacho_half').speed_mean_rpm as number).toBeCloseTo(1500, 6);
    expect(row('tacho_half').revolutions as number).toBeGreaterThanOrEqual(48);
    expect(row('tacho_half').pulses_missing).toBe(0);
    expect(row('tacho_half').pulse_coverage as number).toBeGreaterThan(0.45);
  });

  it('has every flag that judges the signal say the channel has no finite samples, and leave the failure to dropout', () => {
    const q = readJson(join(out, 'quality.json'));
    type Flag = { name: string; severity: string; value: number | null; message: string };
    const flagsOf = (recording: string, channel: string) => q.recordings.find((r: any) => r.recording === recording).channels.find((c: any) => c.channel === channel).flags as Flag[];
    // Which flags judge the signal on each: saturation, resolution and noise_floor where the declaration lets them (range, bits,
    // noise_floor), offset on the quantities that carry no DC, pulse_train on a tacho.
    const judged: [string, string, string[]][] = [
      ['run-1.wav', 'lost', ['peak_capture', 'flatline', 'spikes']],
      ['run-1.wav', 'strain_lost', ['saturation', 'resolution', 'peak_capture', 'flatline', 'noise_floor', 'spikes']],
      ['run-1.wav', 'tacho_lost', ['peak_capture', 'flatline', 'spikes', 'pulse_train']],
      ['spot.csv', 'acc_gone', ['peak_capture', 'flatline', 'offset', 'spikes']],
    ];
    for (const [recording, channel, names] of judged) {
      const flags = flagsOf(recording, channel);
      for (const name of names) {
        const f = flags.find((g) => g.name === name)!;
        expect(f.message, `${channel} ${name}`).toBe('not assessed: the channel has no finite samples (the dropout flag fails it)');
        expect(f.severity, `${channel} ${name}`).toBe('ok');
        expect(f.value, `${channel} ${name}`).toBeNull();
      }
      const dropout = flags.find((f) => f.name === 'dropout')!;
      expect(dropout.severity, channel).toBe('fail');
      expect(dropout.message, channel).toMatch(/^8000 samples missing \(100 %\).*the channel has no finite samples: no figure of its signal can be computed/);
      // Dropout alone fails it: the channel's verdict names no other flag.
      expect(flags.filter((f) => f.severity !== 'ok').map((f) => f.name), channel).toEqual(['dropout']);
      expect(row(channel).quality, channel).toBe('fail');
      expect(row(channel).flags, channel).toBe('dropout');
    }
    // The tone beside it is judged as ever, and so is the half-missing tone.
    const wav = (channel: string, name: string) => flagsOf('run-1.wav', channel).find((f) => f.name === name)!;
    expect(wav('acc', 'flatline').message).toMatch(/^spread /);
    expect(wav('half', 'spikes').message).toBe('no spikes');
    expect(wav('half', 'spikes').value).toBe(0);
  });
});

describe('the MTVV note of a channel with no finite samples', () => {
  // MTVV's running RMS integrates over τ = 1 s (ISO 2631-1:1997 §6.3.1, from memory): these 4 s recordings are four times that.
  it('says the channel has no finite samples, not that a 4 s recording is shorter than the 1 s integration time', () => {
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), 'groups:\n  - name: bench\n    match: "*.wav"\n    channels:\n'
      + '      - { name: acc, quantity: acceleration, unit: m/s^2, max_frequency_hz: 500 }\n'
      + '      - { name: lost, quantity: acceleration, unit: m/s^2, max_frequency_hz: 500 }\n'
      + '      - { name: half, quantity: acceleration, unit: m/s^2, max_frequency_hz: 500 }\n');
    writeFileSync(join(archive, 'reduction.yaml'), 'mtvv: { integration_s: 1.0 }\n');
    const tone = Float64Array.from({ length: N }, (_, i) => 0.5 * Math.sin(2 * Math.PI * 50 * t(i)));
    writeFileSync(join(archive, 'run-1.wav'), encodeWav({ sampleRate: FS, encoding: 'float32', channels: [tone, new Float64Array(N).fill(NaN), firstHalfLost(tone)] }));
    const out = join(archive, '..', 'out');
    const r = quern('reduce', archive, '--out', out, '--quiet');
    expect(r.code, r.stdout + r.stderr).toBe(0);
    const said = JSON.stringify(readJson(join(out, 'run.json')).recordings.find((x: { recording: string }) => x.recording === 'run-1.wav'));
    expect(said).toContain('lost: the channel has no finite samples (the dropout flag fails it); mtvv left empty');
    expect(said).not.toContain('MTVV integration time');
    // The half-missing tone keeps 2 s of finite samples, more than one window: no note on it.
    expect(said).not.toMatch(/half: [^"]*mtvv/);
  });
});
