// What a planner does with a run, in headless Chromium against the served page: set a short
// horizon, run in the worker with progress, scrub the years, switch layers, read a cell's
// history (checked against the engine's IceRun stepped separately on the page's thread),
// refuse bad values, keep the scenario across a reload, and cancel a long run.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import {
  ARTIFACTS, colourAtCell, mapSnapshot, session, shownNumber, startPage, stopPage, typeInto,
} from './harness.mjs';

const SHORT_YEARS = 60;

async function runState() {
  return session.page.evaluate(() => window.forefield.state());
}

async function waitForRun(states) {
  await session.page.waitForFunction((wanted) => wanted.includes(document.body.dataset.run), states,
    { timeout: 120000 });
}

before(startPage);
after(stopPage);

describe('a run of the sample scenario', () => {
  test('runs in the worker with advancing progress while the page stays responsive', async () => {
    const { page } = session;
    await typeInto('#field-n_years', String(SHORT_YEARS));
    // A main-thread timer samples the progress bar: if the run blocked this thread, no sample
    // could fall between the start and the end of the run.
    await page.evaluate(() => {
      window.samples = [];
      window.sampler = setInterval(() => {
        const bar = document.getElementById('run-progress');
        window.samples.push({ value: bar.value, max: bar.max, run: document.body.dataset.run });
      }, 5);
    });
    await page.click('#run');
    await waitForRun(['done', 'failed']);
    const samples = await page.evaluate(() => { clearInterval(window.sampler); return window.samples; });
    const state = await runState();
    assert.equal(state.run, 'done', await page.locator('#run-status').innerText());
    const during = samples.filter((s) => s.run === 'running' && s.max === SHORT_YEARS);
    const midway = new Set(during.filter((s) => s.value > 0 && s.value < SHORT_YEARS).map((s) => s.value));
    assert.ok(midway.size >= 2, `the timer saw only ${[...midway]} as progress during the run`);
    assert.equal(await page.locator('#run-progress').evaluate((bar) => bar.value), SHORT_YEARS);
    assert.equal(state.timeline.start_year, 2025);
    assert.equal(state.timeline.last_year, 2025 + SHORT_YEARS);
    assert.equal(state.summaryYears, SHORT_YEARS + 1);
    assert.match(await page.locator('#run-status').innerText(), /Done: 2025 to 2085/);
    assert.equal(await page.locator('#year-label').innerText(), '2085');
    assert.equal(state.layer, 'ice_thickness');
    assert.match(await page.locator('#legend').innerText(), /Ice thickness \(m\)/);
    await page.screenshot({ path: join(ARTIFACTS, 'run-ice-thickness.png') });
  });

  test('the slider moves the map, the year label and the chart marker', async () => {
    const { page } = session;
    const endMap = await mapSnapshot();
    const endMarker = await page.evaluate(() => window.forefield.chartMarkerX());
    await page.locator('#year-slider').focus();
    await page.keyboard.press('Home');
    assert.equal(await page.locator('#year-label').innerText(), '2025');
    const startMap = await mapSnapshot();
    assert.notEqual(startMap.hash, endMap.hash, 'the map should differ between 2025 and 2085');
    const startMarker = await page.evaluate(() => window.forefield.chartMarkerX());
    assert.ok(startMarker < endMarker, `marker ${startMarker} should sit left of ${endMarker}`);
    for (let i = 0; i < 5; i += 1) await page.keyboard.press('ArrowRight');
    assert.equal(await page.locator('#year-label').innerText(), '2030');
    assert.equal((await runState()).year, 2030);
    const marker2030 = await page.evaluate(() => window.forefield.chartMarkerX());
    assert.ok(marker2030 > startMarker && marker2030 < endMarker);
    await page.click('#year-forward');
    assert.equal(await page.locator('#year-label').innerText(), '2031');
    await page.click('#year-back');
    await page.click('#year-back');
    assert.equal(await page.locator('#year-label').innerText(), '2029');
    const map2029 = await mapSnapshot();
    assert.notEqual(map2029.hash, startMap.hash);
  });

  test('a cell that the ice leaves turns from ice colour to ground, and its history matches the engine', async () => {
    const { page } = session;
    // Find a cell under thick ice at the start that is ice-free by the end.
    const cell = await page.evaluate(() => {
      const { n_cols: nCols, n_rows: nRows } = window.forefield.info();
      for (let row = 20; row < nRows - 20; row += 7) {
        for (let col = 20; col < nCols - 20; col += 7) {
          const h = window.forefield.cellHistory(col, row);
          const last = h.ice_thickness_m.length - 1;
          if (h.exposure_year != null && h.exposure_year > 2035 && h.ice_thickness_m[0] > 5
            && h.ice_thickness_m[last] === 0) return { col, row };
        }
      }
      return null;
    });
    assert.ok(cell, 'no cell of the sample melts out between 2035 and 2085');
    const engine = await page.evaluate(({ col, row }) => window.forefield.engineCellSeries(col, row), cell);
    const exposedIndex = engine.years.findIndex((y, i) => i > 0 && engine.ice_thickness_m[i] < 1);
    assert.equal(engine.exposure_year, engine.years[exposedIndex]);
    const yearWithIce = engine.years[Math.max(1, exposedIndex - 3)];

    // Show a year when the cell still has ice, then click the cell on the map.
    await page.locator('#year-slider').focus();
    await page.keyboard.press('Home');
    for (let y = 2025; y < yearWithIce; y += 1) await page.keyboard.press('ArrowRight');
    assert.equal(await page.locator('#year-label').innerText(), String(yearWithIce));
    const iceColour = await colourAtCell(cell.col, cell.row);
    const point = await page.evaluate(({ col, row }) => window.forefield.cellCentreOnPage(col, row), cell);
    await page.mouse.click(point.x, point.y);
    await page.locator('#hi-cell').filter({ hasText: `col ${cell.col}, row ${cell.row}` }).waitFor();

    assert.equal(shownNumber(await page.locator('#hi-exposed').innerText()), engine.exposure_year);
    const shownIce = shownNumber(await page.locator('#hi-ice').innerText());
    const engineIce = engine.ice_thickness_m[engine.years.indexOf(yearWithIce)];
    // Kept in 0.05 m steps, shown to 0.1 m: within 0.025 + 0.05 m.
    assert.ok(Math.abs(shownIce - engineIce) <= 0.076, `panel ${shownIce} m, engine ${engineIce} m`);
    assert.match(await page.locator('#hi-ice-label').innerText(), new RegExp(String(yearWithIce)));

    // Every year of the stored history against the engine: within the 0.05 m storage step
    // under ice, exactly zero once the engine calls the cell ice-free.
    const history = await page.evaluate(({ col, row }) => window.forefield.cellHistory(col, row), cell);
    assert.deepEqual(history.years, engine.years);
    engine.ice_thickness_m.forEach((h, i) => {
      if (h >= 1) assert.ok(Math.abs(history.ice_thickness_m[i] - h) <= 0.026, `year ${engine.years[i]}: ${history.ice_thickness_m[i]} vs ${h}`);
      else assert.equal(history.ice_thickness_m[i], 0, `year ${engine.years[i]}`);
    });

    // After the exposure year the map shows ground (grey), before it ice (blue dominant).
    await page.locator('#year-slider').focus();
    await page.keyboard.press('End');
    assert.equal(await page.locator('#year-label').innerText(), '2085');
    const groundColour = await colourAtCell(cell.col, cell.row);
    assert.ok(iceColour[2] > iceColour[0] + 15, `ice colour ${iceColour} should be bluish`);
    assert.ok(Math.abs(groundColour[2] - groundColour[0]) < 15, `ground colour ${groundColour} should be grey`);
    await page.screenshot({ path: join(ARTIFACTS, 'run-cell-history.png') });
  });

  test('switching to the exposure layer changes map and legend', async () => {
    const { page } = session;
    const before = await mapSnapshot();
    await page.selectOption('#layer', 'exposure_year');
    assert.equal((await runState()).layer, 'exposure_year');
    const legend = await page.locator('#legend').innerText();
    assert.match(legend, /Exposure year/);
    assert.match(legend, /2025/);
    assert.match(legend, /2085/);
    assert.match(legend, /under ice/);
    const after = await mapSnapshot();
    assert.notEqual(after.hash, before.hash);
    const engineLegend = await page.evaluate(() => window.forefield.legend());
    assert.equal(engineLegend.title, 'Exposure year');
    assert.equal(engineLegend.max, 2085);
    await page.screenshot({ path: join(ARTIFACTS, 'run-exposure-year.png') });
    await page.selectOption('#layer', 'terrain');
    assert.match(await page.locator('#legend').innerText(), /Surface elevation \(m\)/);
    await page.selectOption('#layer', 'ice_thickness');
  });

  test('an invalid value is flagged at its field and nothing runs', async () => {
    const { page } = session;
    const before = await runState();
    await typeInto('#field-n_years', '5000');
    const error = page.locator('#field-n_years-error');
    await error.waitFor();
    assert.match(await error.innerText(), /between 1 and 2000/);
    // The ice group starts folded; a planner opens it.
    await page.locator('summary', { hasText: /^Ice$/ }).click();
    await typeInto('#field-mass_balance-ela_m', 'high');
    assert.match(await page.locator('#field-mass_balance-ela_m-error').innerText(), /not a number/);
    await page.click('#run');
    assert.equal((await runState()).run, 'invalid');
    assert.match(await page.locator('#run-status').innerText(), /Not run/);
    assert.match(await page.locator('.form-message').innerText(), /nothing was sent/);
    assert.deepEqual((await runState()).timeline, before.timeline, 'the last result should stay');
    await page.screenshot({ path: join(ARTIFACTS, 'run-invalid-value.png') });
    // Back to valid values; the flags go away.
    await typeInto('#field-n_years', String(SHORT_YEARS));
    await typeInto('#field-mass_balance-ela_m', '2950');
    assert.equal(await error.isVisible(), false);
  });

  test('the scenario survives a reload; reset brings the defaults back', async () => {
    const { page } = session;
    await typeInto('#field-name', 'Warm valley test');
    await typeInto('#field-climate-warming_c_per_decade', '0.45');
    await page.reload();
    await page.waitForFunction(() => document.body.dataset.state === 'ready');
    assert.equal(await page.locator('#field-name').inputValue(), 'Warm valley test');
    assert.equal(await page.locator('#field-climate-warming_c_per_decade').inputValue(), '0.45');
    assert.equal(await page.locator('#field-n_years').inputValue(), String(SHORT_YEARS));
    assert.equal(await page.locator('#field-mass_balance-ela_m').inputValue(), '2950');
    await page.click('#scenario-reset');
    assert.equal(await page.locator('#field-climate-warming_c_per_decade').inputValue(), '0.3');
    assert.equal(await page.locator('#field-n_years').inputValue(), '100');
  });

  test('a long run can be cancelled', async () => {
    const { page } = session;
    await typeInto('#field-n_years', '2000');
    await page.click('#run');
    await page.waitForFunction(() => document.getElementById('run-progress').value >= 3, null, { timeout: 60000 });
    await page.click('#cancel');
    await waitForRun(['cancelled', 'done']);
    assert.equal((await runState()).run, 'cancelled');
    assert.match(await page.locator('#run-status').innerText(), /Cancelled at \d{4}/);
    assert.equal(await page.locator('#run').isEnabled(), true);
    assert.equal(await page.locator('#cancel').isEnabled(), false);
    assert.deepEqual(session.consoleErrors, []);
    assert.deepEqual(session.foreignRequests, []);
  });
});
