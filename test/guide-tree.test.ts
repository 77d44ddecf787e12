// The contributor guide's picture of pipeline/ names every file the folder holds, so the tree and the guide stay one.
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';

const root = join(__dirname, '..');
const filesUnder = (dir: string): string[] => readdirSync(join(root, dir), { withFileTypes: true }).flatMap((e) => (e.isDirectory() ? filesUnder(join(dir, e.name)) : e.name.endsWith('.ts') ? [join(dir, e.name)] : []));

describe('DEVELOPERS.md', () => {
  it('names every file under pipeline/ in its tree or tables', () => {
    const guide = readFileSync(join(root, 'DEVELOPERS.md'), 'utf8');
    const files = filesUnder('pipeline');
    expect(files.length).toBeGreaterThan(50);
    const unnamed = files.filter((f) => !guide.includes(f.split('/').pop()!));
    expect(unnamed).toEqual([]);
  });
});
