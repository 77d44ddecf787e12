// The workbook as LibreOffice (an independent XLSX reader and renderer) reads it: formula injection neutralised, and a picture.
import { execFileSync } from 'node:child_process';
import { mkdirSync, readFileSync, readdirSync, renameSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parse } from 'csv-parse/sync';
import { describe, expect, it } from 'vitest';
import { encodeWav } from '../../scripts/wav-file.js';
import { quern, repo, sampleArchiveCopy, tempDir } from '../helpers.js';
import { requireTool } from './tools.js';

const INJECTION = '=HYPERLINK("http://example.invalid","x")';
const base = (header: string) => header.replace(/ \[.*\]$/, '');
const profile = (dir: string) => `-env:UserInstallation=file://${dir}/profile`;

describe('the workbook in LibreOffice', () => {
  it('cells that a spreadsheet would run as formulas arrive as text (OWASP, "CSV Injection")', () => {
    const soffice = requireTool('soffice');
    const archive = join(tempDir(), 'archive');
    mkdirSync(archive);
    writeFileSync(join(archive, 'archive.yaml'), `groups:\n  - name: g\n    match: "*.wav"\n    labels: { rig: "@SUM(1+1)" }\n    channels:\n      - { name: '${INJECTION}', quantity: voltage, unit: "-V" }\n`);
    writeFileSync(join(archive, '+cmd.wav'), encodeWav({ sampleRate: 1000, channels: [Float64Array.from({ length: 2000 }, (_, i) => 0.3 * Math.sin(i / 7))] }));
    const out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet', '--export', 'xlsx');
    const dir = tempDir();
    execFileSync(soffice, ['--headless', profile(dir), '--convert-to', 'csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false', '--outdir', dir, join(out, 'tables.xlsx')], { stdio: 'ignore', timeout: 120_000 });
    const lo: string[][] = parse(readFileSync(join(dir, 'tables.csv'), 'utf8'), { relax_column_count: true });
    const h = lo[0].map(base);
    expect(lo[1][h.indexOf('channel')]).toBe(`'${INJECTION}`);
    expect(lo[1][h.indexOf('recording')]).toBe("'+cmd.wav");
  });

  it('renders the sample archive\'s features sheet; the picture is kept in test/artifacts', () => {
    const soffice = requireTool('soffice'), pdftoppm = requireTool('pdftoppm');
    const archive = sampleArchiveCopy(), out = join(archive, '..', 'out');
    quern('reduce', archive, '--out', out, '--quiet', '--export', 'xlsx');
    const dir = tempDir();
    execFileSync(soffice, ['--headless', profile(dir), '--convert-to', 'pdf', '--outdir', dir, join(out, 'tables.xlsx')], { stdio: 'ignore', timeout: 180_000 });
    execFileSync(pdftoppm, ['-png', '-r', '70', '-f', '1', '-l', '1', join(dir, 'tables.pdf'), join(dir, 'page')]);
    const png = readdirSync(dir).find((f) => f.startsWith('page') && f.endsWith('.png'))!;
    mkdirSync(join(repo, 'test', 'artifacts'), { recursive: true });
    renameSync(join(dir, png), join(repo, 'test', 'artifacts', 'tables-xlsx.png'));
    expect(statSync(join(repo, 'test', 'artifacts', 'tables-xlsx.png')).size).toBeGreaterThan(10_000);
  });
});
