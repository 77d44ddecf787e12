// Files shipped with quern (schemas, default spec, version), found from the running module wherever it was built to.
import { existsSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

function findRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  while (!existsSync(join(dir, 'package.json')) || !existsSync(join(dir, 'schemas'))) {
    const up = dirname(dir);
    if (up === dir) throw new Error('quern: cannot find its own package folder (package.json beside schemas/)');
    dir = up;
  }
  return dir;
}

export const packageRoot = findRoot();

export const readSchema = async (name: string): Promise<object> => JSON.parse(await readFile(join(packageRoot, 'schemas', name), 'utf8'));

export const toolVersion: string = JSON.parse(await readFile(join(packageRoot, 'package.json'), 'utf8')).version;
