// A headless Chromium for the report tests that comes from npm: @sparticuz/chromium ships the browser (and the NSS libraries and
// fonts it needs) inside the package, so nothing is downloaded or installed from the system. It is unpacked once, atomically,
// into node_modules/.cache, where every test file (in parallel workers) finds it.
import { createReadStream, existsSync, mkdirSync, mkdtempSync, readFileSync, renameSync, rmSync, writeFileSync, chmodSync, createWriteStream } from 'node:fs';
import { dirname, join } from 'node:path';
import { pipeline } from 'node:stream/promises';
import { createBrotliDecompress } from 'node:zlib';
import { chromium, type Browser } from 'playwright-core';
import { extract } from 'tar-fs';
import { repo } from './helpers.js';

const packageDir = join(repo, 'node_modules', '@sparticuz', 'chromium');
const version: string = JSON.parse(readFileSync(join(packageDir, 'package.json'), 'utf8')).version;
const bin = join(packageDir, 'bin');
const home = join(repo, 'node_modules', '.cache', `quern-chromium-${version}`);

/** The unpacked browser's folder: chromium, lib/ (NSS for systems without it), fonts/ and a fontconfig file. */
async function unpacked(): Promise<string> {
  if (existsSync(join(home, 'ready'))) return home;
  mkdirSync(dirname(home), { recursive: true });
  const tmp = mkdtempSync(`${home}.tmp-`);
  await pipeline(createReadStream(join(bin, 'chromium.br')), createBrotliDecompress(), createWriteStream(join(tmp, 'chromium')));
  chmodSync(join(tmp, 'chromium'), 0o755);
  for (const pack of ['al2023.tar.br', 'fonts.tar.br']) await pipeline(createReadStream(join(bin, pack)), createBrotliDecompress(), extract(tmp));
  writeFileSync(join(tmp, 'fonts.conf'), `<?xml version="1.0"?>\n<!DOCTYPE fontconfig SYSTEM "fonts.dtd">\n<fontconfig>\n  <dir>${join(home, 'fonts')}</dir>\n  <dir>/usr/share/fonts</dir>\n  <cachedir>${join(home, 'fonts-cache')}</cachedir>\n</fontconfig>\n`);
  writeFileSync(join(tmp, 'ready'), version);
  try {
    renameSync(tmp, home);
  } catch {
    if (existsSync(join(home, 'ready'))) rmSync(tmp, { recursive: true, force: true }); // another test worker unpacked it first
    else {
      // a folder left without a finished browser (a font cache written into it after the browser was removed) is replaced
      rmSync(home, { recursive: true, force: true });
      renameSync(tmp, home);
    }
  }
  return home;
}

/** Launches the packaged Chromium headless, with no network use beyond the page's own file. */
export async function launchBrowser(): Promise<Browser> {
  const dir = await unpacked();
  return chromium.launch({
    executablePath: join(dir, 'chromium'),
    args: ['--no-sandbox', '--no-zygote', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--font-render-hinting=none'],
    env: { ...process.env, LD_LIBRARY_PATH: [join(dir, 'lib'), process.env.LD_LIBRARY_PATH].filter(Boolean).join(':'), FONTCONFIG_PATH: dir, FONTCONFIG_FILE: join(dir, 'fonts.conf') },
  });
}

/** Opens a local page, collecting console errors, page errors and any request that leaves the file system. */
export async function openPage(browser: Browser, file: string, viewport = { width: 1300, height: 900 }) {
  const page = await browser.newPage({ viewport });
  const errors: string[] = [];
  page.on('console', (m) => { if (m.type() === 'error') errors.push(m.text()); });
  page.on('pageerror', (e) => errors.push(String(e)));
  page.on('request', (r) => { if (!r.url().startsWith('file:')) errors.push(`network request: ${r.url()}`); });
  await page.goto(`file://${file}`);
  return { page, errors };
}
