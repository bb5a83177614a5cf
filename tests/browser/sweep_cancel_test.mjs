// A running sweep can be cancelled from the page; the points taken so far stay.
import assert from 'node:assert/strict';
import { run } from './harness.mjs';

await run('sweep_cancel', async ({ page, api }) => {
  await page.click('#tab-sweep');
  await page.fill('#sweep-form [name=start_hz]', '20');
  await page.fill('#sweep-form [name=stop_hz]', '20000');
  await page.fill('#sweep-form [name=points_per_decade]', '20');
  await page.click('#sweep-start');
  await page.waitForFunction(() => Number(document.querySelector('#sweep-impedance').dataset.points) >= 1, null, { timeout: 60000 });
  assert.equal(await page.isEnabled('#sweep-cancel'), true);
  await page.click('#sweep-cancel');
  await page.waitForFunction(() => document.querySelector('#sweep-status').dataset.status === 'cancelled', null, { timeout: 30000 });
  assert.match(await page.textContent('#sweep-status'), /cancelled — the points taken are kept/);
  assert.equal(await page.isEnabled('#sweep-cancel'), false);
  const { sweeps } = await api('/sweeps');
  assert.equal(sweeps[0].status, 'cancelled');
  assert.ok(sweeps[0].points_saved >= 1 && sweeps[0].points_saved < sweeps[0].points_planned,
    `a cancelled sweep keeps some points: ${sweeps[0].points_saved} of ${sweeps[0].points_planned}`);
});
