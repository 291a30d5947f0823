/**
 * Whether the browser tests (*.browser.test.ts, headless Chromium through playwright-core) run.
 * They need a Chromium binary: /usr/bin/chromium (Debian: `apt-get install chromium`) or the path in
 * TREEWRIGHT_CHROMIUM. Without one they are skipped, and the run prints one line saying so
 * (test/setup/browsers.ts) — unless CI=true, which makes them mandatory: in CI a missing Chromium
 * fails them instead of hiding them (.ci/run installs Chromium first).
 */
import { existsSync } from 'node:fs';

export const CHROMIUM = process.env.TREEWRIGHT_CHROMIUM || '/usr/bin/chromium';
export const IN_CI = process.env.CI === 'true' || process.env.CI === '1';
export const HAVE_CHROMIUM = existsSync(CHROMIUM);
/** true when this run must exercise the browser tests */
export const BROWSER_TESTS = HAVE_CHROMIUM || IN_CI;
