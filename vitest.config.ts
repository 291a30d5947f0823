import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    // prints one line when the browser tests are skipped for want of Chromium (test/browser.ts)
    globalSetup: ['test/setup/browsers.ts'],
  },
});
