// A reading on the simulated bench shows its value, rounded to its uncertainty, with the
// test frequency and the part type; forcing the type to R shows a resistance.
import assert from 'node:assert/strict';
import { run } from './harness.mjs';

await run('reading', async ({ page }) => {
  await page.click('#live-take');
  await page.waitForFunction(() => document.querySelector('#live-number').textContent !== '—', null, { timeout: 30000 });
  const number = await page.textContent('#live-number');
  const unit = await page.textContent('#live-unit');
  // The demo bench holds a 6.8 µF film capacitor (docs/api.md, GET /api/v1/bench).
  assert.equal(unit, 'µF');
  assert.ok(Math.abs(Number(number) - 6.8) < 0.4, `expected about 6.8 µF, got ${number} ${unit}`);
  assert.match(await page.textContent('#live-u'), /^± [0-9.]+ µF/);
  assert.equal(await page.textContent('#live-freq'), '1.000 kHz');
  assert.match(await page.textContent('#live-kind'), /capacitor \(detected\)/);
  assert.match(await page.textContent('#live-secondary'), /ESR/);
  await page.selectOption('#live-force', 'R');
  await page.click('#live-take');
  await page.waitForFunction(() => document.querySelector('#live-kind').textContent.includes('forced'), null, { timeout: 30000 });
  assert.match(await page.textContent('#live-unit'), /Ω$/);
});
