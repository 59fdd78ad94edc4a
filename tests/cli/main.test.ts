import { expect, test } from 'vitest';
import { main } from '../../src/cli/main';

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

test('--help lists the commands and exits 0', async () => {
  const c = capture();
  expect(await main(['--help'], c.io)).toBe(0);
  expect(c.out.join('')).toMatch(/Usage: stratameter COMMAND/);
});

test('an unknown command is an error with exit code 2', async () => {
  const c = capture();
  expect(await main(['frobnicate'], c.io)).toBe(2);
  expect(c.err.join('')).toMatch(/unknown command 'frobnicate'/);
});
