import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vitest/config';

// Tests check results, never speed (performance lives in `treewright bench`). A shared or loaded
// machine runs the heavier property tests 5-10x slower than an idle one, so the per-test limit is
// generous: it only catches hangs. It lives in test/ (the top level holds only the package's own
// files); `npm test` passes it with --config.
export default defineConfig({
  root: fileURLToPath(new URL('..', import.meta.url)),
  test: {
    testTimeout: 60_000,
    hookTimeout: 60_000,
    // prints one line when the browser tests are skipped for want of Chromium (test/browser.ts)
    globalSetup: ['test/setup/browsers.ts'],
  },
});
