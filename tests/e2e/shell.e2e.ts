import { afterAll, beforeAll, expect, test } from 'vitest';
import { foreignRequests, openSession, type Session } from './browser';

let s: Session;
beforeAll(async () => { s = await openSession(); });
afterAll(async () => { await s?.close(); });

test('the app shell renders and asks for nothing outside 127.0.0.1', async () => {
  const errors: string[] = [];
  s.page.on('pageerror', (e) => errors.push(String(e)));
  await s.page.goto(s.url);
  await s.page.waitForSelector('strata-app');
  const title = await s.page.locator('strata-app h1').textContent();
  expect(title).toContain('Stratameter');
  expect(errors).toEqual([]);
  expect(foreignRequests(s.requests, s.url)).toEqual([]);
});
