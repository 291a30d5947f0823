// The skip notice's file filters: `npm test` (`vitest run --config test/vitest.config.ts`) is a
// whole-suite run, so it prints the notice; a run of other files does not.
import { describe, expect, it } from 'vitest';
import { fileFilters, includesBrowserTests } from './browsers.ts';

describe('browser-skip notice', () => {
  it('npm test is a whole-suite run: the config file is not a filter', () => {
    expect(fileFilters(['run', '--config', 'test/vitest.config.ts'])).toEqual([]);
    expect(includesBrowserTests(fileFilters(['run', '--config', 'test/vitest.config.ts']))).toBe(true);
  });

  it('file filters decide: other files only, no notice; a browser test named, the notice', () => {
    expect(includesBrowserTests(fileFilters(['run', '--config', 'test/vitest.config.ts', 'test/smoke.test.ts']))).toBe(false);
    expect(includesBrowserTests(fileFilters(['run', '-c', 'test/vitest.config.ts', '-t', 'x', 'test/eval/report.browser.test.ts']))).toBe(true);
    expect(fileFilters(['run', '--reporter=dot', 'test/eval'])).toEqual(['test/eval']);
  });
});
