import { describe, expect, it, vi } from 'vitest';
import { main } from '../src/cli/main.ts';

describe('cli', () => {
  it('prints help (captured, not echoed into the test output) and exits 0', async () => {
    let out = '';
    const spy = vi.spyOn(process.stdout, 'write').mockImplementation((chunk: string | Uint8Array) => {
      out += String(chunk);
      return true;
    });
    try {
      expect(await main(['--help'])).toBe(0);
    } finally {
      spy.mockRestore();
    }
    expect(out.split('\n')[0]).toBe('Usage: treewright [options] [command]');
    for (const command of ['check', 'parse', 'print', 'mask', 'generate', 'evaluate', 'serve']) expect(out).toMatch(new RegExp(`^  ${command}\\b`, 'm'));
  });
});
