// An engine failure in the worker (a trap or running out of memory, simulated here by a worker
// that throws a WebAssembly.RuntimeError for one scenario name) shows a message and leaves the
// terrain, the scenario and the last run usable; the next run gets a fresh worker.

import { after, before, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { session, startPage, stopPage, typeInto } from './harness.mjs';

const WWW = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'www');
const CRASH_NAME = 'engine trap';

async function runAndWait() {
  const { page } = session;
  await page.click('#run');
  await page.waitForFunction(() => ['done', 'failed'].includes(document.body.dataset.run), null,
    { timeout: 120000 });
  return page.locator('body').getAttribute('data-run');
}

before(async () => {
  await startPage();
  // The real worker, with one line added: a run of the named scenario dies as a trapped
  // engine would.
  const real = readFileSync(join(WWW, 'worker.js'), 'utf8');
  const crashing = real.replace('  cancelRequested = false;\n  let recorder = null;\n  try {\n',
    `  cancelRequested = false;\n  let recorder = null;\n  try {\n    if (JSON.parse(scenarioJson).name === ${JSON.stringify(CRASH_NAME)}) throw new WebAssembly.RuntimeError('unreachable');\n`);
  assert.notEqual(crashing, real, 'the worker changed shape: update this test');
  session.workerLoads = 0;
  await session.page.context().route('**/worker.js', (route) => {
    session.workerLoads += 1;
    return route.fulfill({ contentType: 'text/javascript', body: crashing });
  });
});
after(stopPage);

test('a failed run leaves the last result and the next run works', async () => {
  const { page } = session;
  await typeInto('#field-n_years', '3');
  assert.equal(await runAndWait(), 'done');
  const loadsBefore = session.workerLoads;
  assert.equal(await page.locator('#year-label').innerText(), '2028');

  await typeInto('#field-name', CRASH_NAME);
  await typeInto('#field-n_years', '5');
  assert.equal(await runAndWait(), 'failed');
  assert.match(await page.locator('#error-area').innerText(), /unreachable/);
  assert.match(await page.locator('#run-status').innerText(), /previous result stays/);
  // The last run is still on screen and usable: its years, its layers, its exports.
  assert.equal(await page.locator('#year-label').innerText(), '2028');
  assert.equal(await page.locator('#year-slider').isDisabled(), false);
  assert.equal(await page.locator('#export-png').isDisabled(), false);
  assert.equal(await page.locator('#field-n_years').inputValue(), '5', 'the scenario stays');

  await typeInto('#field-name', 'after the failure');
  assert.equal(await runAndWait(), 'done', await page.locator('#run-status').innerText());
  assert.equal(await page.locator('#year-label').innerText(), '2030');
  assert.equal(session.workerLoads, loadsBefore + 1, 'a fresh worker for the run after the failure');
});
