// Settings: the form is built from the service's table; a live setting changed on the page
// reaches the service, and a bad value is refused with the service's own words.
import assert from 'node:assert/strict';
import { run } from './harness.mjs';

await run('settings', async ({ page, api }) => {
  await page.click('#tab-settings');
  await page.locator('#set-rref_ohm').waitFor();
  // Every setting of the table has a field; restart-only ones are shown but locked.
  const { schema } = await api('/settings');
  for (const row of schema) assert.equal(await page.locator(`#set-${row.name}`).count(), 1, `a field for ${row.name}`);
  assert.equal(await page.isDisabled('#set-port'), true);
  assert.equal(await page.locator('#set-layout option').count(), 2);
  await page.fill('#set-rref_ohm', '10');
  await page.selectOption('#set-layout', 'part-high');
  await page.getByRole('button', { name: 'Apply the changes' }).click();
  await page.waitForFunction(() => document.querySelector('#settings-result').textContent.startsWith('Saved'));
  const { values } = await api('/settings');
  assert.equal(values.rref_ohm, 10);
  assert.equal(values.layout, 'part-high');
  // The calibration guide follows the new set-up.
  await page.click('#tab-calibrate');
  await page.waitForFunction(() => document.querySelector('#cal-setup').textContent.includes('part-high, Rref 10.00 Ω'));
  // A value out of range: the service's message, nothing changed.
  await page.click('#tab-settings');
  await page.fill('#set-rref_ohm', '-1');
  await page.getByRole('button', { name: 'Apply the changes' }).click();
  await page.waitForFunction(() => document.querySelector('#settings-error').textContent.includes('rref_ohm'));
  assert.equal((await api('/settings')).values.rref_ohm, 10);
});
