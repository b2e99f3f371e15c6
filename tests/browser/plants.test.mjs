// A run with plants, as a planner reads it in headless Chromium: the succession-stage layer
// and its legend, cover and soil layers, the stage-area chart, and one cell's stage and cover
// history checked against the engine's CoupledRun stepped separately on the page's thread.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import {
  ARTIFACTS, colourAtCell, mapSnapshot, session, startPage, stopPage, typeInto,
} from './harness.mjs';

const YEARS = 40;
const END = 2025 + YEARS;

async function showYear(year) {
  const { page } = session;
  await page.locator('#year-slider').focus();
  await page.keyboard.press('Home');
  for (let y = 2025; y < year; y += 1) await page.keyboard.press('ArrowRight');
  assert.equal(await page.locator('#year-label').innerText(), String(year));
}

/** Whether `shown` is `legend` darkened by one hillshade factor (0.45 to 1), to rounding. */
function isShadeOf(shown, legend) {
  const k = shown[1] / legend[1];
  return k > 0.4 && k <= 1.01 && [0, 1, 2].every((c) => Math.abs(shown[c] - k * legend[c]) <= 4);
}

before(startPage);
after(stopPage);

describe('a run with plants', () => {
  let engine = null;
  let cell = null;

  test('records stages, covers and soil and offers their layers', async () => {
    const { page } = session;
    await typeInto('#field-n_years', String(YEARS));
    await page.click('#run');
    await page.waitForFunction(() => ['done', 'failed'].includes(document.body.dataset.run), null,
      { timeout: 180000 });
    assert.equal(await page.evaluate(() => document.body.dataset.run), 'done',
      await page.locator('#run-status').innerText());
    const { timeline } = await page.evaluate(() => window.forefield.state());
    assert.equal(timeline.type_names.length, 5);
    assert.ok(timeline.plant_memory_bytes > 0);
    const options = await page.locator('#layer option:not([disabled])').evaluateAll(
      (all) => all.map((o) => o.value));
    for (const value of ['stage', 'soil', 'cover:0', 'cover:4']) assert.ok(options.includes(value), value);
  });

  test('the stage layer changes the map and its legend names every stage in its map colour', async () => {
    const { page } = session;
    const iceMap = await mapSnapshot();
    await page.selectOption('#layer', 'stage');
    const stageMap = await mapSnapshot();
    assert.notEqual(stageMap.hash, iceMap.hash);
    const legendText = await page.locator('#legend').innerText();
    for (const name of ['Succession stage', 'ice', 'bare ground', 'pioneer', 'meadow', 'shrubland',
      'young forest', 'mature forest']) assert.match(legendText, new RegExp(name));
    // A cell's map colour is its stage's legend colour under the relief shading.
    const legend = await page.evaluate(() => window.forefield.legend());
    const seen = new Set();
    for (const [col, row] of [[30, 370], [200, 200], [370, 40], [60, 60], [340, 340], [200, 380]]) {
      const history = await page.evaluate(([c, r]) => window.forefield.cellHistory(c, r), [col, row]);
      const stage = history.stage[history.stage.length - 1];
      seen.add(stage);
      const shown = await colourAtCell(col, row);
      assert.ok(isShadeOf(shown, legend.classes[stage].rgb),
        `cell ${col},${row}: map ${shown}, legend ${legend.classes[stage].label} ${legend.classes[stage].rgb}`);
    }
    assert.ok(seen.size >= 2, `only stages ${[...seen]} among the checked cells`);
    // The year before the end draws differently where stages moved on.
    await page.click('#year-back');
    await page.click('#year-back');
    await page.click('#year-back');
    const earlier = await mapSnapshot();
    const marker = await page.evaluate(() => window.forefield.stageChartMarkerX());
    await page.click('#year-forward');
    assert.ok(await page.evaluate(() => window.forefield.stageChartMarkerX()) > marker);
    await page.locator('#year-slider').focus();
    await page.keyboard.press('End');
    assert.equal((await mapSnapshot()).hash, stageMap.hash);
    // Ice keeps retreating, so three years earlier some cells still show ice.
    assert.notEqual(earlier.hash, stageMap.hash);
  });

  test('a cell the ice leaves: its stage every year and cover at stored years match the engine', async () => {
    const { page } = session;
    // A cell under ice at the start that plants reach before the end.
    cell = await page.evaluate(() => {
      const { n_cols: nCols, n_rows: nRows } = window.forefield.info();
      for (let row = 10; row < nRows - 10; row += 5) {
        for (let col = 10; col < nCols - 10; col += 5) {
          const h = window.forefield.cellHistory(col, row);
          if (h.stage[0] === 0 && h.stage[h.stage.length - 1] >= 2) return { col, row };
        }
      }
      return null;
    });
    assert.ok(cell, `no cell of the sample goes from ice to plants within ${YEARS} years`);
    engine = await page.evaluate(({ col, row }) => window.forefield.engineCoupledSeries(col, row), cell);
    const history = await page.evaluate(({ col, row }) => window.forefield.cellHistory(col, row), cell);
    assert.deepEqual(history.years, engine.years);
    assert.deepEqual(history.stage, engine.stage, 'stage per year');
    // Cover and soil are stored in 1/255 steps at keyframe years.
    for (const year of history.cover_keyframe_years) {
      const i = engine.years.indexOf(year);
      engine.cover.forEach((series, t) => {
        assert.ok(Math.abs(history.cover[t][i] - series[i]) <= 0.5 / 255 + 1e-6,
          `type ${t} in ${year}: ${history.cover[t][i]} vs ${series[i]}`);
      });
      assert.ok(Math.abs(history.soil[i] - engine.soil[i]) <= 0.5 / 255 + 1e-6, `soil in ${year}`);
    }
    // The stage-area chart's numbers are the engine's own summary.
    const summary = await page.evaluate(() => window.forefield.summary());
    const last = engine.summary[engine.summary.length - 1].vegetation.stage_area_km2;
    assert.deepEqual(summary[summary.length - 1].vegetation.stage_area_km2, last);
  });

  test('clicking the cell shows its stage for the slider year and the years each stage came', async () => {
    const { page } = session;
    const firstPlants = engine.stage.findIndex((s) => s >= 2);
    const year = engine.years[firstPlants];
    await showYear(year);
    const point = await page.evaluate(({ col, row }) => window.forefield.cellCentreOnPage(col, row), cell);
    await page.mouse.click(point.x, point.y);
    await page.locator('#hi-cell').filter({ hasText: `col ${cell.col}, row ${cell.row}` }).waitFor();
    const names = (await page.evaluate(() => window.forefield.legend())).classes.map((c) => c.label);
    assert.equal(await page.locator('#hi-stage').innerText(), names[engine.stage[firstPlants]]);
    assert.match(await page.locator('#hi-stage-label').innerText(), new RegExp(String(year)));
    const firstYears = await page.locator('#hi-stages').innerText();
    assert.match(firstYears, new RegExp(`${names[engine.stage[firstPlants]]} ${year}`));
    await page.locator('#year-slider').focus();
    await page.keyboard.press('Home');
    assert.equal(await page.locator('#hi-stage').innerText(), 'ice');
    await page.keyboard.press('End');
    await page.screenshot({ path: join(ARTIFACTS, 'plants-stage-history.png') });
  });

  test('cover and soil layers have percentage and index legends and differ from the stage map', async () => {
    const { page } = session;
    const stageMap = await mapSnapshot();
    await page.selectOption('#layer', 'cover:0');
    const legendText = await page.locator('#legend').innerText();
    assert.match(legendText, /Cover: .+ \(%\)/);
    assert.match(legendText, /100 %/);
    const coverMap = await mapSnapshot();
    assert.notEqual(coverMap.hash, stageMap.hash);
    await page.screenshot({ path: join(ARTIFACTS, 'plants-cover.png') });
    await page.selectOption('#layer', 'soil');
    assert.match(await page.locator('#legend').innerText(), /Soil development \(index\)/);
    assert.notEqual((await mapSnapshot()).hash, coverMap.hash);
    await page.screenshot({ path: join(ARTIFACTS, 'plants-soil.png') });
    await page.selectOption('#layer', 'stage');
    await page.screenshot({ path: join(ARTIFACTS, 'plants-stage.png') });
    await page.locator('#chart-stages').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(ARTIFACTS, 'plants-charts.png') });
    assert.deepEqual(session.consoleErrors, []);
    assert.deepEqual(session.foreignRequests, []);
  });
});
