// A 10-inch tablet in portrait and landscape: no view scrolls sideways, the touch targets
// are big enough; screenshots of the desktop and the tablet for the docs.
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { mkdirSync } from 'node:fs';
import { run } from './harness.mjs';

const shots = process.env.TB_SCREENSHOT_DIR;
if (shots) mkdirSync(shots, { recursive: true });

async function noSidewaysScroll(page, what) {
  const { scroll, client, wide } = await page.evaluate(() => ({
    scroll: document.documentElement.scrollWidth, client: document.documentElement.clientWidth,
    wide: [...document.querySelectorAll('main *')].filter((e) => e.getBoundingClientRect().right > document.documentElement.clientWidth + 1)
      .slice(0, 3).map((e) => `${e.tagName}#${e.id}.${e.className}`),
  }));
  assert.ok(scroll <= client, `${what}: the page is ${scroll} px wide in a ${client} px window (${wide.join(', ')})`);
}

await run('tablet', async ({ page }) => {
  // Something to show: a reading and a short sweep.
  await page.click('#live-take');
  await page.waitForFunction(() => document.querySelector('#live-number').textContent !== '—', null, { timeout: 30000 });
  await page.click('#tab-sweep');
  await page.fill('#sweep-form [name=start_hz]', '20');
  await page.fill('#sweep-form [name=stop_hz]', '20000');
  await page.fill('#sweep-form [name=points_per_decade]', '5');
  await page.fill('#sweep-form [name=duration_s]', '0.1');
  await page.fill('#sweep-form [name=label]', 'C3 as found');
  await page.click('#sweep-start');
  await page.waitForFunction(() => document.querySelector('#sweep-status').dataset.status === 'complete', null, { timeout: 120000 });
  await page.waitForTimeout(400);
  if (shots) await page.screenshot({ path: join(shots, 'bench-desktop-sweep.png'), fullPage: true });
  await page.click('#tab-live');
  if (shots) await page.screenshot({ path: join(shots, 'bench-desktop-reading.png') });
  // A demo job chosen, so the jobs view has parts to lay out.
  await page.click('#tab-jobs');
  await page.selectOption('#jobs-select', { index: 1 });
  await page.waitForSelector('#jobs-parts tr');

  for (const [name, viewport] of [['portrait', { width: 800, height: 1280 }], ['landscape', { width: 1280, height: 800 }]]) {
    await page.setViewportSize(viewport);
    for (const tab of ['live', 'sweep', 'jobs', 'calibrate', 'settings']) {
      await page.click(`#tab-${tab}`);
      await page.waitForTimeout(300);
      await noSidewaysScroll(page, `${name}, ${tab}`);
      // Touch targets: every visible button at least 44 px high (WCAG 2.5.5).
      const small = await page.evaluate(() => [...document.querySelectorAll('button')]
        .filter((b) => b.offsetParent && b.getBoundingClientRect().height < 43.5).map((b) => b.textContent));
      assert.deepEqual(small, [], `${name}, ${tab}: buttons under 44 px`);
      if (shots && name === 'portrait' && ['live', 'sweep', 'jobs'].includes(tab)) {
        await page.screenshot({ path: join(shots, `bench-tablet-${tab}.png`), fullPage: true });
      }
    }
  }
  if (shots) {
    await page.setViewportSize({ width: 800, height: 1280 });
    await page.emulateMedia({ colorScheme: 'dark' });
    await page.click('#tab-live');
    await page.screenshot({ path: join(shots, 'bench-tablet-dark-live.png') });
  }
}, { viewport: { width: 1280, height: 900 } });
