import { describe, expect, it } from 'vitest';
import { main } from '../src/cli/main.ts';

describe('cli', () => {
  it('prints help and exits 0', async () => {
    expect(await main(['--help'])).toBe(0);
  });
});
