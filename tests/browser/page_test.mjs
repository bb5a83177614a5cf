// The page loads from the service with its plotting library (no internet needed), the
// safety notice must be acknowledged once and is remembered, and the views switch.
import assert from 'node:assert/strict';
import { run, acknowledgeSafety } from './harness.mjs';

await run('page', async ({ page, url }) => {
  // Served by tonebridged itself from node_modules/uplot/dist.
  for (const file of ['uPlot.iife.min.js', 'uPlot.min.css']) {
    const r = await page.request.get(`${url}vendor/uplot/${file}`);
    assert.equal(r.status(), 200, `vendor/uplot/${file} should be served`);
  }
  assert.equal(await page.evaluate(() => typeof window.uPlot), 'function', 'uPlot should load');
  // Acknowledged once (by the harness): a reload shows no notice.
  assert.ok(await page.evaluate(() => localStorage.getItem('tonebridge.safety-acknowledged')));
  await page.reload();
  await page.waitForSelector('#state[data-state]');
  assert.equal(await page.locator('#safety').isVisible(), false, 'the notice should not come back');
  // A fresh browser profile sees it again, and Escape does not skip it.
  await page.evaluate(() => localStorage.clear());
  await page.reload();
  await page.locator('#safety').waitFor({ state: 'visible' });
  await page.keyboard.press('Escape');
  assert.equal(await page.locator('#safety').isVisible(), true, 'Escape must not dismiss the safety notice');
  await acknowledgeSafety(page);
  // Tabs by click and by arrow keys.
  await page.click('#tab-sweep');
  assert.equal(await page.locator('#view-sweep').isVisible(), true);
  await page.keyboard.press('ArrowRight');
  assert.equal(await page.locator('#view-jobs').isVisible(), true);
  await page.click('#tab-settings');
  await page.locator('#set-rref_ohm').waitFor();
  await page.click('#tab-calibrate');
  await page.locator('.cal-step img').first().waitFor();
  const img = await page.locator('.cal-step img').first().evaluate((i) => i.complete && i.naturalWidth > 0);
  assert.ok(img, 'the calibration drawing should load');
}, { acknowledge: true });
