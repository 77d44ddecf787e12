// The export options of reduce and merge (--digits, --bom, --decimal-comma, --wide) are judged before any work, and refused
// without --export, which they would otherwise silently do nothing for.
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { quern, tempDir } from './helpers.js';

/** One CSV recording of a 50 Hz tone at 1 kHz, group rig. */
function toneArchive(): string {
  const dir = join(tempDir(), 'arc');
  mkdirSync(join(dir, 'a'), { recursive: true });
  writeFileSync(join(dir, 'archive.yaml'), 'groups:\n  - name: rig\n    match: "a/*.csv"\n    channels:\n      - { name: acc, quantity: acceleration, unit: m/s^2 }\n');
  writeFileSync(join(dir, 'reduction.yaml'), 'statistics: {}\n');
  const rows = Array.from({ length: 1000 }, (_, i) => `${(i / 1000).toFixed(3)},${Math.sin(2 * Math.PI * 50 * i / 1000).toFixed(6)}`);
  writeFileSync(join(dir, 'a', 'run1.csv'), ['time,acc', ...rows].join('\n'));
  return dir;
}

describe('export options given to reduce and merge', () => {
  it('refuses a --digits outside 1 to 17 at once, writing nothing, as quern export does', () => {
    const archive = toneArchive(), out = join(archive, '..', 'out');
    // 17 significant digits read any double back exactly (IEEE 754-2008, 5.12.2; from memory): more can say nothing more.
    for (const digits of ['0', '18', '2.5']) {
      const r = quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv', '--digits', digits);
      expect(r.code).toBe(2);
      expect(r.stderr).toBe(`quern: --digits takes a whole number from 1 to 17, got ${digits}\n`);
      expect(existsSync(out)).toBe(false); // refused before the output folder was made: no work done
    }
    const merge = quern('merge', out, '--export', 'csv', '--digits', '0');
    expect(merge.code).toBe(2);
    expect(merge.stderr).toBe('quern: --digits takes a whole number from 1 to 17, got 0\n');
    expect(quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv', '--digits', '3', '--digits', '4').stderr).toMatch(/--digits is given 2 times \(3, 4\); give it once/);
    expect(existsSync(out)).toBe(false);
  });

  it('refuses export options without --export, naming them and what to do', () => {
    const archive = toneArchive(), out = join(archive, '..', 'out');
    const one = quern('reduce', archive, '--out', out, '--quiet', '--digits', '6');
    expect(one.code).toBe(2);
    expect(one.stderr).toBe('quern: --digits 6 shapes the spreadsheet copies that --export writes, and no --export is given: add --export csv (or xlsx, csv,xlsx), or drop it\n');
    const some = quern('merge', out, '--bom', '--decimal-comma', '--wide');
    expect(some.code).toBe(2);
    expect(some.stderr).toMatch(/^quern: --bom, --decimal-comma, --wide shape the spreadsheet copies that --export writes, and no --export is given: add --export csv \(or xlsx, csv,xlsx\), or drop them\n$/);
    expect(existsSync(out)).toBe(false);
  });

  it('takes them with --export: 17 digits and the switches, applied to the copies', () => {
    const archive = toneArchive(), out = join(archive, '..', 'out');
    const r = quern('reduce', archive, '--out', out, '--quiet', '--export', 'csv', '--digits', '17', '--decimal-comma', '--wide');
    expect(r.code, r.stderr).toBe(0);
    expect(readFileSync(join(out, 'features.csv'), 'utf8').split('\r\n')[0]).toContain(';');
    expect(existsSync(join(out, 'features-wide.csv'))).toBe(true);
  });
});
