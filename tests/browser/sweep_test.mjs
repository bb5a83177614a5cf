// A sweep fills the plot point by point while it runs, ends complete, draws the fitted
// model, and exports as CSV and JSON.
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { run } from './harness.mjs';

await run('sweep', async ({ page }) => {
  await page.click('#tab-sweep');
  await page.fill('#sweep-form [name=start_hz]', '100');
  await page.fill('#sweep-form [name=stop_hz]', '10000');
  await page.fill('#sweep-form [name=points_per_decade]', '4');
  await page.fill('#sweep-form [name=duration_s]', '0.1');
  await page.fill('#sweep-form [name=label]', 'C3 browser test');
  await page.click('#sweep-start');
  // Watch the point count grow: at least two different counts before the end.
  const seen = new Set();
  const deadline = Date.now() + 120000;
  while (Date.now() < deadline) {
    const n = Number(await page.getAttribute('#sweep-impedance', 'data-points'));
    if (n > 0) seen.add(n);
    if ((await page.getAttribute('#sweep-status', 'data-status')) === 'complete') break;
    await page.waitForTimeout(100);
  }
  assert.equal(await page.getAttribute('#sweep-status', 'data-status'), 'complete', await page.textContent('#sweep-status'));
  const counts = [...seen].sort((a, b) => a - b);
  assert.ok(counts.length >= 2, `the plot should fill in steps, saw point counts ${counts}`);
  await page.waitForFunction(() => Number(document.querySelector('#sweep-impedance').dataset.points) >= 9);
  assert.ok(await page.locator('#sweep-impedance canvas').count() > 0, 'uPlot should draw a canvas');
  assert.ok(await page.locator('#sweep-losses canvas').count() > 0);
  // The fitted model's curve joins the plot as more series.
  await page.click('#sweep-fit');
  await page.waitForFunction(() => document.querySelector('#sweep-fit-result').textContent.startsWith('Fitted'), null, { timeout: 30000 });
  await page.waitForFunction(() => [...document.querySelectorAll('#sweep-impedance .u-legend th')].some((t) => t.textContent.includes('fit')));
  // Cursor read-out.
  const over = page.locator('#sweep-impedance .u-over');
  const box = await over.boundingBox();
  await over.hover({ position: { x: box.width / 2, y: box.height / 2 } });
  await over.hover({ position: { x: box.width / 2 + 5, y: box.height / 2 } });
  await page.waitForFunction(() => document.querySelector('#sweep-impedance + output').textContent.includes('Hz ·'), null, { timeout: 5000 })
    .catch(() => {});
  assert.match(await page.locator('#sweep-impedance + output').textContent(), /Hz · \|Z\| #\d+, Ω: /);
  // Exports.
  for (const [link, check] of [['#sweep-export-csv', (t) => t.startsWith('# tonebridge sweep') && t.includes('freq_hz,')],
    ['#sweep-export-json', (t) => JSON.parse(t).columns.freq_hz.length >= 9]]) {
    const [download] = await Promise.all([page.waitForEvent('download'), page.click(link)]);
    const text = readFileSync(await download.path(), 'utf8');
    assert.ok(check(text), `${link} should download the sweep, got: ${text.slice(0, 120)}`);
  }
});
