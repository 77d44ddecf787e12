// What is new in a night's changes: seven nights of an invented rig, a +8 dB step on night 4, run night by night with --since
// as a lab's nightly job does; only the night a change or an alarm first shows is news, and --exit-on new says so.
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../scripts/wav-file.js';
import { grownInItsTerms } from '../pipeline/trends/news.js';
import { quern, readJson, tempDir } from './helpers.js';

const FS = 8000;
// +8 dB of amplitude is a factor 10^(8/20) = 2.512 (decibels of an amplitude, 20·log10; common practice).
const STEP = 10 ** (8 / 20);

/** Night n's recording (n from 1): a tone (300 Hz unless told) and seeded noise at `gain` times the baseline amplitude. */
function night(n: number, gain: number, hz = 300): Buffer {
  let a = 4000 + n;
  const u = () => { a = (a + 0x6d2b79f5) >>> 0; let t = Math.imul(a ^ (a >>> 15), a | 1); t ^= t + Math.imul(t ^ (t >>> 7), t | 61); return ((t ^ (t >>> 14)) >>> 0) / 4294967296; };
  const x = new Float64Array(FS);
  for (let i = 0; i < FS; i++) x[i] = gain * (1.5 * Math.sin(2 * Math.PI * hz * i / FS) + 0.2 * Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u())) / 100;
  return encodeWav({ sampleRate: FS, channels: [x], origination: new Date(Date.UTC(2026, 10, n, 2)) });
}
const day = (n: number) => `2026-11-${String(n).padStart(2, '0')}`;

const ARCHIVE = `groups:
  - name: rig
    match: "rig/*.wav"
    sample_rate: ${FS}
    channels:
      - { name: acc, quantity: acceleration, unit: m/s^2, scale: 100, range: [-100, 100], bits: 16 }
`;

/**
 * An archive whose nights arrive one by one, and the nightly command over it. `limits`: the spec's trends.limits, if any;
 * `tones`: each night's tone frequency, watched as dominant_frequency in place of rms.
 */
function rig(gains: number[], limits = '', tones?: number[]) {
  const root = tempDir(), archive = join(root, 'archive'), out = join(root, 'out');
  mkdirSync(join(archive, 'rig'), { recursive: true });
  writeFileSync(join(archive, 'archive.yaml'), ARCHIVE);
  const watched = tones ? 'spectrum: { segment: 4096, overlap: 0.5, window: hann }\ntrends: { features: [dominant_frequency]' : 'statistics: {}\ntrends: { features: [rms]';
  writeFileSync(join(root, 'spec.yaml'), `${watched}${limits ? `, limits: { ${limits} }` : ''} }\n`);
  const arrive = (n: number) => writeFileSync(join(archive, 'rig', `${day(n)}.wav`), night(n, gains[n - 1], tones?.[n - 1]));
  const reduce = (...more: string[]) => quern('reduce', archive, '--out', out, '--spec', join(root, 'spec.yaml'), '--jobs', '1', ...(more.includes('--log') ? [] : ['--quiet']), ...more);
  const changes = () => readJson(join(out, 'quality.json')).changes;
  return { out, arrive, reduce, changes };
}

const changedLines = (stdout: string) => stdout.split('\n').filter((l) => /^\s+(CHANGED|ALARM)/.test(l));

describe('what is new tonight', () => {
  it('a step on night 4 is new that night alone: --exit-on new fires once, --exit-on changed every night after, and a re-run tells nothing new', () => {
    const { out, arrive, reduce, changes } = rig([1, 1, 1, STEP, STEP, STEP, STEP]);
    for (let n = 1; n <= 3; n++) {
      arrive(n);
      // Baseline forming (the first 3): nothing changed, so nothing new.
      expect(reduce('--since', day(n), '--exit-on', 'new').code).toBe(0);
    }
    arrive(4);
    const four = reduce('--since', day(4), '--exit-on', 'new');
    expect(four.code).toBe(3);
    expect(four.stdout).toContain('  exit code 3: 1 channel feature new in this run');
    expect(changedLines(four.stdout)).toEqual([expect.stringMatching(/^ {2}CHANGED rig acc rms .* on 2026-11-04: \+8\.\d dB.*; NEW$/)]);
    expect(four.stdout).toMatch(/^ {2}new: {5}1 new in this run \(marked NEW, listed first after any alarms\), 0 reported already/m);
    expect(changes().items).toMatchObject([{ channel: 'acc', feature: 'rms', verdict: 'changed', new: true }]);
    expect(changes().news).toEqual({ new: 1, compared: true });
    const html = readFileSync(join(out, 'quality.html'), 'utf8');
    expect(html).toMatch(/<tr data-feature="rms" data-new="true"><td><span class="sev sev-warn">changed<\/span> <b>new<\/b><\/td>/);

    // The same night again, nothing changed: the previous run reported it, so nothing is new and the rest reads as before.
    const again = reduce('--since', day(4), '--exit-on', 'new');
    expect(again.code).toBe(0);
    expect(again.stdout).not.toContain('exit code 3');
    expect(changedLines(again.stdout)).toEqual(changedLines(four.stdout).map((l) => l.replace(/; NEW$/, '')));
    expect(again.stdout).toContain('  new:     none: the previous run into this output folder reported it already');
    // Nothing else changed, so the outputs are left as night 4's run wrote them, its marks with them: they tell what was new
    // in the run that wrote them (run.json names it), and only the terminal tells this run's news.
    expect(readJson(join(out, 'run.json')).outputs).toMatchObject({ rewritten: false });
    expect(changes().items).toMatchObject([{ verdict: 'changed', new: true }]);
    expect(readFileSync(join(out, 'quality.html'), 'utf8')).toBe(html);

    for (let n = 5; n <= 7; n++) {
      arrive(n);
      const quiet = reduce('--since', day(n), '--exit-on', 'new');
      expect(quiet.code).toBe(0);
      expect(changedLines(quiet.stdout)).toEqual([expect.stringMatching(new RegExp(`^ {2}CHANGED rig acc rms .* on ${day(n)}: \\+8\\.\\d dB.*, since 2026-11-04$`))]);
      expect(changes().items).toMatchObject([{ verdict: 'changed', new: false, since: { recording: `rig/${day(4)}.wav` } }]);
      // The same night asked with --exit-on changed: the change still stands, so it still fires.
      const told = reduce('--since', day(n), '--exit-on', 'changed');
      expect(told.code).toBe(3);
      expect(told.stdout).toContain('  exit code 3: 1 channel feature changed (--exit-on changed)');
    }
  });

  it('a change that rises to an alarm limit on night 6 is news again; a first run over the whole archive finds everything new', () => {
    // Baseline rms about 1.07 m/s² (the tone's 1.5/√2 and the noise, at scale 100); the alarm at 3.4 m/s², +10 dB, lies
    // between the step's +8 dB and night 6's +11 dB.
    const { arrive, reduce, changes } = rig([1, 1, 1, STEP, STEP, STEP * 10 ** (3 / 20), STEP * 10 ** (3 / 20)], 'rms: { alarm: 3.4 }');
    for (let n = 1; n <= 5; n++) arrive(n);
    const first = reduce('--exit-on', 'new', '--log', 'json');
    expect(first.code).toBe(3);
    expect(first.stdout).toContain('  new:     all 1: no earlier report of this output folder is kept (cache/reported-changes.json) to compare with');
    expect(changes().news).toEqual({ new: 1, compared: false });
    const summary = first.stderr.split('\n').filter(Boolean).map((l) => JSON.parse(l)).find((e) => e.event === 'summary');
    expect(summary.changes).toEqual({ alarm: 0, changed: 1, new: 1 });

    arrive(6);
    const six = reduce('--since', day(6), '--exit-on', 'new', '--log', 'json');
    expect(six.code).toBe(3);
    expect(changedLines(six.stdout)).toEqual([expect.stringMatching(/^ {2}ALARM {3}rig acc rms .* on 2026-11-06: .*; at or above its alarm limit 3\.4 m\/s\^2, since 2026-11-04; NEW$/)]);
    expect(changes().items).toMatchObject([{ verdict: 'alarm', new: true }]);
    expect(six.stderr.split('\n').filter(Boolean).map((l) => JSON.parse(l)).find((e) => e.event === 'summary').changes).toEqual({ alarm: 1, changed: 0, new: 1 });

    arrive(7);
    const seven = reduce('--since', day(7), '--exit-on', 'new,quiet');
    expect(seven.code).toBe(0);
    expect(changes().items).toMatchObject([{ verdict: 'alarm', new: false }]);
    // --exit-on alarm keeps its meaning: the alarm stands, new or not.
    expect(reduce('--since', day(7), '--exit-on', 'alarm').code).toBe(3);
  });

  it('a change that grows by the change threshold since it was told is news again; one that holds or creeps less is not', () => {
    // +8 dB on night 4, +16 dB on night 6 (8 dB more than told, over the 6 dB threshold), +18 dB on night 7 (2 dB more than told).
    const { arrive, reduce, changes } = rig([1, 1, 1, STEP, STEP, STEP * STEP, STEP * STEP * 10 ** (2 / 20)]);
    for (let n = 1; n <= 3; n++) { arrive(n); reduce('--since', day(n)); }
    arrive(4);
    expect(reduce('--since', day(4), '--exit-on', 'new').code).toBe(3);
    arrive(5);
    expect(reduce('--since', day(5), '--exit-on', 'new').code).toBe(0);
    arrive(6);
    const six = reduce('--since', day(6), '--exit-on', 'new');
    expect(six.code).toBe(3);
    expect(changedLines(six.stdout)).toEqual([expect.stringMatching(/^ {2}CHANGED rig acc rms .* on 2026-11-06: \+1[56]\.\d dB.*; NEW$/)]);
    expect(changes().items).toMatchObject([{ verdict: 'changed', new: true }]);
    arrive(7);
    expect(reduce('--since', day(7), '--exit-on', 'new').code).toBe(0);
    expect(changes().items).toMatchObject([{ verdict: 'changed', new: false }]);
  });

  it('a figure that is no level (a dominant frequency, no change in dB) is news again when its robust score grows by the score threshold, not on every move', () => {
    // The tone moves from 300 Hz: the baseline of three equal nights has a spread of 10 % of its median (spread_floor), about
    // 30 Hz, so 500 Hz scores about +6.6 (changed, over 6), 520 Hz +7.3, 700 Hz +13.2 (grown 6.6 since told: news), 740 Hz
    // +14.6 (grown 1.4 since told: not news). The dominant frequency is the Welch bin nearest the tone, k·fs/segment with
    // fs/segment = 1.953125 Hz (a Hann-windowed tone peaks in its nearest bin, common practice).
    const { arrive, reduce, changes } = rig([1, 1, 1, 1, 1, 1, 1], '', [300, 300, 300, 500, 520, 700, 740]);
    for (let n = 1; n <= 3; n++) { arrive(n); reduce('--since', day(n)); }
    const told: { night: number; new: boolean; score: number }[] = [];
    for (let n = 4; n <= 7; n++) {
      arrive(n);
      const r = reduce('--since', day(n), '--exit-on', 'new');
      const [item] = changes().items;
      expect(item).toMatchObject({ feature: 'dominant_frequency', verdict: 'changed', change_db: null });
      expect(r.code).toBe(item.new ? 3 : 0);
      told.push({ night: n, new: item.new, score: item.score });
    }
    expect(told.map((x) => x.new)).toEqual([true, false, true, false]);
    const bin = (hz: number) => Math.round(hz / (FS / 4096)) * (FS / 4096), m = bin(300);
    expect(told.map((x) => x.score)).toEqual([500, 520, 700, 740].map((hz) => expect.closeTo((bin(hz) - m) / (0.1 * m), 9)));
  });

  it('a night without a recording of the channel keeps what was reported: the change is not new when the rig captures again', () => {
    const { arrive, reduce, changes } = rig([1, 1, 1, STEP, STEP, STEP, STEP]);
    for (let n = 1; n <= 4; n++) arrive(n);
    expect(reduce('--exit-on', 'new').code).toBe(3);
    // Night 5 has no capture: its --since run holds no recording, so no verdict of the channel, and the report stays.
    expect(reduce('--since', day(5)).code).toBe(0);
    arrive(6);
    expect(reduce('--since', day(6), '--exit-on', 'new').code).toBe(0);
    expect(changes().items).toMatchObject([{ verdict: 'changed', new: false }]);
  });
});

describe('growth since last told, each change in its own terms', () => {
  const thresholds = { change_db: 6, score: 6 };
  it('a level grows by the change threshold in dB, whatever its score does; a figure with no dB by the score threshold', () => {
    // A level: +8 dB told, +13 dB now (5 dB more) with its score grown by 40: not news; +14 dB: news.
    expect(grownInItsTerms({ change_db: 13, score: 60 }, { change_db: 8, score: 20 }, thresholds)).toBe(false);
    expect(grownInItsTerms({ change_db: 14, score: 21 }, { change_db: 8, score: 20 }, thresholds)).toBe(true);
    // Kurtosis or a frequency (no change in dB): a score of +7 told, +12.9 now is not news, +13 is; a turn to −13 is no growth.
    expect(grownInItsTerms({ change_db: null, score: 12.9 }, { change_db: null, score: 7 }, thresholds)).toBe(false);
    expect(grownInItsTerms({ change_db: null, score: 13 }, { change_db: null, score: 7 }, thresholds)).toBe(true);
    expect(grownInItsTerms({ change_db: null, score: -13 }, { change_db: null, score: 7 }, thresholds)).toBe(false);
    // A report kept before scores were kept (no score told): never grown, told again only when its verdict rises.
    expect(grownInItsTerms({ change_db: null, score: 50 }, {}, thresholds)).toBe(false);
  });
});
