// Continuous readings with hold: once readings agree within their uncertainty the value
// is held (said in words, not only by a frame), and continuous reading can be stopped.
import assert from 'node:assert/strict';
import { run } from './harness.mjs';

await run('hold', async ({ page, api }) => {
  await page.check('#live-hold');
  await page.click('#live-watch');
  await page.waitForFunction(() => document.querySelector('#live-watch').getAttribute('aria-pressed') === 'true', null, { timeout: 30000 });
  await page.locator('#live-held').waitFor({ state: 'visible', timeout: 60000 });
  assert.match(await page.textContent('#live-held'), /Held: the value was stable/);
  const held = await page.textContent('#live-number');
  await page.click('#live-watch');
  await page.waitForFunction(() => document.querySelector('#live-watch').getAttribute('aria-pressed') === 'false', null, { timeout: 30000 });
  assert.equal(await page.textContent('#live-number'), held, 'a held value stays until released');
  await page.click('#live-release');
  assert.equal(await page.locator('#live-held').isVisible(), false);
  assert.equal((await api('/status')).engine.state, 'idle');
});
