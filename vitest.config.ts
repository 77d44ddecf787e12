import { defineConfig } from 'vitest/config';

// npm test: everything that needs only Node and the packages npm installs. The checks against Debian's tools are in test/system/.
export default defineConfig({
  test: {
    setupFiles: ['test/remove-temp-dirs.ts'],
    include: ['test/**/*.test.ts'],
    exclude: ['test/system/**', '**/node_modules/**'],
    testTimeout: 120_000,
    hookTimeout: 120_000,
  },
});
