import { defineConfig } from 'vitest/config';

// npm run test:system: checks against Debian's tools (LibreOffice, sox, flac, ffmpeg, Python with scipy); a missing tool fails its check.
export default defineConfig({
  test: {
    setupFiles: ['test/remove-temp-dirs.ts'],
    include: ['test/system/**/*.test.ts'],
    testTimeout: 300_000,
    hookTimeout: 300_000,
  },
});
