// Opening another terrain after a run: the old run's years, notes and export status go with
// it, so nothing on screen speaks of a run the new terrain never had.

import { after, before, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { ARTIFACTS, chooseFiles, expectLoaded, exportFile, loadCount, session, startPage, stopPage,
  typeInto } from './harness.mjs';

const SAMPLE = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'sample-grids');

before(startPage);
after(stopPage);

test('another terrain clears the last run from the screen', async () => {
  const { page } = session;
  await typeInto('#field-n_years', '3');
  await page.click('#run');
  await page.waitForFunction(() => ['done', 'failed'].includes(document.body.dataset.run), null,
    { timeout: 120000 });
  assert.equal(await page.locator('body').getAttribute('data-run'), 'done');
  assert.equal(await page.locator('#year-slider').isDisabled(), false);
  assert.equal(await page.locator('#year-label').innerText(), '2028');
  assert.equal(await page.locator('#run-notes').isVisible(), true);
  await exportFile('export-png');
  assert.match(await page.locator('#export-status').innerText(), /^Saved /);

  const loads = await loadCount();
  // The sample's terrain under another name: the planner's own, with no ice yet.
  await chooseFiles({ name: 'my_terrain.tif', mimeType: 'image/tiff',
    buffer: readFileSync(join(SAMPLE, 'valley_dem.tif')) });
  await expectLoaded(loads);
  for (const id of ['year-slider', 'year-back', 'year-forward', 'play', 'export-png']) {
    assert.equal(await page.locator(`#${id}`).isDisabled(), true, `#${id} still enabled`);
  }
  assert.equal(await page.locator('#year-label').innerText(), '–');
  assert.equal(await page.locator('#export-status').innerText(), '');
  assert.equal(await page.locator('#run-notes').isVisible(), false);
  assert.equal(await page.locator('#layer').inputValue(), 'terrain');
  assert.equal(await page.locator('#export-hint').innerText(),
    'After a run: exports of the layer and year on the map.');
  assert.match(await page.locator('#run-status').innerText(), /open its ice/);
  await page.screenshot({ path: join(ARTIFACTS, 'stale_state.png') });
});
