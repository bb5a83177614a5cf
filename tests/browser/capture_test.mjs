// Capture: pick a job's part, take a reading, press Space (as a foot switch does): the
// reading is filed under that part and the next designator is chosen.
import assert from 'node:assert/strict';
import { run } from './harness.mjs';

await run('capture', async ({ page, api }) => {
  const job = await api('/jobs', { method: 'POST', body: { make: 'Browser Test', model: 'Two-way', serial: 'LLA-26-900' } });
  const c1 = await api(`/jobs/${job.id}/parts`, { method: 'POST', body: { designator: 'C1', marking: '6.8 µF J 250 V' } });
  await api(`/jobs/${job.id}/parts`, { method: 'POST', body: { designator: 'C2', marking: '6.8 µF J 250 V' } });
  await page.click('#tab-jobs');
  await page.waitForSelector(`#jobs-select option[value="${job.id}"]`, { state: 'attached' });
  await page.selectOption('#jobs-select', String(job.id));
  await page.waitForSelector(`#part-${c1.id}:checked`);
  await page.click('#tab-live');
  assert.match(await page.textContent('#live-target'), /^C1 .*original/);
  await page.click('#live-take');
  await page.waitForFunction(() => document.querySelector('#live-reading').dataset.readingId, null, { timeout: 30000 });
  const readingId = Number(await page.getAttribute('#live-reading', 'data-reading-id'));
  await page.locator('#live-reading').click();  // focus away from the buttons, as a technician's hands would
  await page.keyboard.press('Space');
  await page.waitForFunction(() => document.querySelector('#live-target').textContent.startsWith('C2'));
  assert.match(await page.textContent('#live-captured'), new RegExp(`Reading ${readingId} filed under C1`));
  const part = await api(`/parts/${c1.id}`);
  assert.deepEqual(part.readings.original.map((r) => r.id), [readingId]);
  // The verdict against the marking, shown as a word with an icon.
  await page.click('#tab-jobs');
  await page.click(`#part-${c1.id}`);
  await page.getByRole('button', { name: 'Check against the marking' }).first().click();
  await page.waitForFunction(() => document.querySelector('#part-readings .verdict') || document.querySelector('#jobs-error').textContent);
  assert.equal(await page.textContent('#jobs-error'), '');
  assert.match(await page.textContent('#part-readings .verdict'), /Pass|Fail|Inconclusive/);
  await page.waitForSelector('#part-verdicts li .verdict');  // and it joins the part's history
  assert.equal(await page.getAttribute('#jobs-report-html', 'href'), `/api/v1/jobs/${job.id}/report?format=html`);
});
