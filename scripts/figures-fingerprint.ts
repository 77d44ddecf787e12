// A digest of the figures and verdicts quern gives the sample archive, kept with the tool version it was made under
// (test/fixtures/figures-fingerprint.json): stored results are reused only under the same version, so figures that change
// under an unchanged version would leave a lab's older results in its tables beside new ones.
// `npm run fingerprint` reduces the sample archive and writes the fixture again; raise package.json's version first.
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { cpSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { asyncBufferFromFile, parquetReadObjects } from 'hyparquet';
import { compressors } from 'hyparquet-compressors';

/** The tables whose rows are stored results; trends.parquet and spectra.parquet are made from them. */
export const FINGERPRINT_TABLES = ['features', 'windows', 'cycles'] as const;

/** A value written the same on every machine: numbers to `digits` significant digits, so the last bits of a sum do not count. */
export function plainValue(v: unknown, digits = 8): string {
  if (v === null || v === undefined) return 'null';
  if (typeof v === 'bigint') return String(v);
  if (typeof v === 'number') return Number.isFinite(v) ? Number(v.toPrecision(digits)).toString() : String(v);
  if (v instanceof Date) return v.toISOString();
  return JSON.stringify(v);
}

/** One line per row, its columns in name order, the rows sorted: the digest does not depend on the order rows were written in. */
export function rowLines(rows: Record<string, unknown>[], digits = 8): string[] {
  return rows.map((r) => Object.keys(r).sort().map((k) => `${k}=${plainValue(r[k], digits)}`).join('\t')).sort();
}

/** Every channel's flags in quality.json: name, severity and value. */
export function flagLines(quality: any, digits = 8): string[] {
  const lines: string[] = [];
  for (const rec of quality.recordings ?? [])
    for (const ch of rec.channels ?? [])
      for (const f of ch.flags ?? []) lines.push(`${rec.recording}\t${ch.channel}\t${f.name}\t${f.severity}\t${plainValue(f.value, digits)}`);
  return lines.sort();
}

/** The digest of a reduced folder's figures and verdicts, and how many lines it covers. */
export async function figuresDigest(reduced: string): Promise<{ digest: string; lines: number }> {
  const hash = createHash('sha256');
  let lines = 0;
  for (const table of FINGERPRINT_TABLES) {
    const rows = await parquetReadObjects({ file: await asyncBufferFromFile(join(reduced, `${table}.parquet`)), compressors });
    for (const line of rowLines(rows as Record<string, unknown>[])) { hash.update(`${table}\t${line}\n`); lines++; }
  }
  for (const line of flagLines(JSON.parse(readFileSync(join(reduced, 'quality.json'), 'utf8')))) { hash.update(`flag\t${line}\n`); lines++; }
  return { digest: hash.digest('hex'), lines };
}

const repo = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
export const fingerprintFile = (root: string) => join(root, 'test', 'fixtures', 'figures-fingerprint.json');

/** Reduces a copy of the sample archive with the built command (one worker, the default spec) and digests the result. */
export async function sampleArchiveDigest(root: string): Promise<{ digest: string; lines: number }> {
  const dir = mkdtempSync(join(tmpdir(), 'quern-fingerprint-'));
  try {
    const archive = join(dir, 'archive');
    cpSync(join(root, 'sample-archive'), archive, { recursive: true });
    try {
      execFileSync(process.execPath, [join(root, 'dist', 'pipeline', 'cli.js'), 'reduce', archive, '--jobs', '1', '--log', 'plain', '--quiet'], { stdio: 'ignore' });
    } catch (e: any) {
      if (e.status !== 1) throw e; // 1: the sample archive plants a truncated recording on purpose
    }
    return await figuresDigest(`${archive}.reduced`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const version: string = JSON.parse(readFileSync(join(repo, 'package.json'), 'utf8')).version;
  const { digest, lines } = await sampleArchiveDigest(repo);
  writeFileSync(fingerprintFile(repo), `${JSON.stringify({ version, digest, lines }, null, 2)}\n`);
  console.log(`figures of the sample archive under ${version}: ${digest} (${lines} lines)`);
}
