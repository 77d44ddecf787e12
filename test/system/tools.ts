// The Debian tools the system checks hold quern against. A missing tool fails the check that needs it, naming the package.
import { spawnSync } from 'node:child_process';
import { expect } from 'vitest';

const PACKAGES: Record<string, string> = {
  soffice: 'libreoffice-calc-nogui', pdftoppm: 'poppler-utils', sox: 'sox', flac: 'flac', ffmpeg: 'ffmpeg', clang: 'clang lld', 'wasm-ld': 'lld', script: 'bsdutils', python3: 'python3-scipy python3-soundfile python3-h5py',
};

/** The tool's path; fails the calling test when it is not installed. */
export function requireTool(name: string): string {
  const found = spawnSync('sh', ['-c', `command -v ${name}`], { encoding: 'utf8' }).stdout.trim();
  expect(found, `${name} is missing: apt-get install ${PACKAGES[name] ?? name} (.ci/run installs it)`).not.toBe('');
  return found;
}

/** Debian's python3 with the given modules importable; fails the calling test otherwise. */
export function requirePython(...modules: string[]): string {
  const python = ['/usr/bin/python3', 'python3'].find((p) => spawnSync(p, ['-c', `import ${modules.join(', ')}`], { stdio: 'ignore' }).status === 0);
  expect(python, `python3 with ${modules.join(', ')} is missing: apt-get install ${modules.map((m) => `python3-${m}`).join(' ')} (.ci/run installs them)`).toBeDefined();
  return python!;
}
