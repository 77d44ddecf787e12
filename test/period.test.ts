// --since and --until take only what the README documents (an ISO 8601 date or date-time, or a span): a slip of the
// keyboard must stop the run, not quietly select another period.
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseWhen } from '../pipeline/select/select.js';
import { quern, sampleArchiveCopy } from './helpers.js';

describe('period edges', () => {
  // Date.parse reads "7" as July 2001, "Nov 16" as 2001-11-16 and "2026-02-30" as 2 March (V8's lenient fallback, from memory).
  it.each(['7', '12', 'Nov 16', '1/2/3', '2026-02-30', '2026-11-31T02:00Z', '2026'])('refuses %j instead of guessing a date', (text) => {
    expect(() => parseWhen(text)).toThrow(/neither a date .* nor a span/);
  });

  it('reads the documented forms, a bare date as midnight UTC (ISO 8601)', () => {
    expect(parseWhen('2026-11-16')).toBe(Date.UTC(2026, 10, 16));
    expect(parseWhen('2026-11-16T02:00Z')).toBe(Date.UTC(2026, 10, 16, 2));
    expect(parseWhen('2026-11-16T02:00:30.5+01:00')).toBe(Date.UTC(2026, 10, 16, 1, 0, 30, 500));
    expect(parseWhen('2026-02-28T23:59:59Z')).toBe(Date.UTC(2026, 1, 28, 23, 59, 59));
    expect(parseWhen('2w', Date.UTC(2026, 10, 30))).toBe(Date.UTC(2026, 10, 16));
  });

  it('a forgotten unit or a reversed period stops the run with exit code 2 before any output is written', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const forgotten = quern('reduce', archive, '--out', out, '--since', '7', '--quiet');
    expect(forgotten.code, forgotten.stdout + forgotten.stderr).toBe(2);
    expect(forgotten.stderr).toMatch(/"7" is neither a date/);
    const reversed = quern('reduce', archive, '--out', out, '--since', '2026-11-21', '--until', '2026-11-19', '--quiet');
    expect(reversed.code, reversed.stdout + reversed.stderr).toBe(2);
    expect(reversed.stderr).toMatch(/--since 2026-11-21 is not before --until 2026-11-19: no recording could be selected; swap them/);
    const empty = quern('reduce', archive, '--out', out, '--since', '2026-11-21', '--until', '2026-11-21', '--quiet');
    expect(empty.code).toBe(2);
    expect(empty.stderr).toMatch(/no recording could be selected; give a later --until \(the period ends before the instant it names\)/);
  });

  it('an option of one value given twice is refused naming it; --exit-on given twice takes the words of both', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const twice = quern('reduce', archive, '--out', out, '--since', '1d', '--since', '2d', '--quiet');
    expect(twice.code).toBe(2);
    expect(twice.stderr).toMatch(/--since is given 2 times \(1d, 2d\); give it once/);
    const outs = quern('reduce', archive, '--out', out, '--out', `${out}-2`, '--quiet');
    expect(outs.code).toBe(2);
    expect(outs.stderr).toMatch(/--out is given 2 times/);
    const both = quern('reduce', archive, '--out', out, '--exit-on', 'alarm', '--exit-on', 'changed', '--quiet');
    expect(both.stderr).not.toMatch(/unexpected error/);
    expect(both.code).toBe(3); // the sample archive's planted changes
  });

  it('a negative, malformed or empty period names the option and the accepted forms, not flags the parser cannot place', () => {
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    const cases: [string[], RegExp][] = [
      [['--since', '-5d'], /^quern: --since -5d: "-5d" is not a span: a span counts back from now and has no sign; write 5d\n/],
      [['--since=-5d'], /^quern: --since -5d: .*write 5d\n/],
      [['--until', '-12h'], /^quern: --until -12h: .*write 12h\n/],
      [['--since', '-5'], /^quern: --since -5: "-5" is neither a date \(2026-11-16, 2026-11-16T02:00Z\) nor a span \(7d, 12h, 30m, 2w\)\n/],
      [['--since', ''], /^quern: --since \(empty\): "" is neither a date .* nor a span/],
      [['--stale-lock-after', '-1h'], /^quern: --stale-lock-after -1h: "-1h" is not a span \(90s, 30m, 12h, 2d, 1w\)\n/],
      [['--stall-limit', '0s'], /^quern: --stall-limit 0s: a stall limit of no time would stop every recording; give a span such as 5m\n/],
    ];
    for (const [args, message] of cases) {
      const r = quern('reduce', archive, '--out', out, ...args, '--quiet');
      expect(r.code, r.stdout + r.stderr).toBe(2);
      expect(r.stderr).toMatch(message);
      expect(r.stderr).not.toMatch(/Unknown argument/);
    }
    expect(existsSync(out)).toBe(false);
  });
});
