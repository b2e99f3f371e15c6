// Disturbances from a scenario file on the page, in headless Chromium: a burn written inline
// in the scenario strikes its polygon's cells in its year and no others, and a scenario that
// names a polygon file (which only the command line can read) is refused with a message
// saying what to do.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { session, startPage, stopPage } from './harness.mjs';

const BURN_YEAR = 2030;
const N_YEARS = 10;

/** A scenario file as the planner would save one: the page's defaults plus `changes`. */
async function scenarioFile(name, changes) {
  const defaults = await session.page.evaluate(async () => {
    const engine = await import('./pkg/forefield_wasm.js');
    return JSON.parse(engine.defaultScenarioJson());
  });
  const scenario = { ...defaults, n_years: N_YEARS, ...changes };
  return { name, mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(scenario)) };
}

async function runToEnd() {
  const { page } = session;
  await page.click('#run');
  await page.waitForFunction(() => ['done', 'failed', 'invalid'].includes(document.body.dataset.run), null,
    { timeout: 120000 });
  return page.locator('body').getAttribute('data-run');
}

before(startPage);
after(stopPage);

describe('disturbances in the scenario', () => {
  test('an inline burn strikes its polygon in its year', async () => {
    const { page } = session;
    const info = await page.evaluate(() => window.forefield.info());
    // A block of forest near the valley mouth: columns 160-240, rows 300-360.
    const x = (col) => info.west_m + col * info.cell_size_m;
    const y = (row) => info.north_m - row * info.cell_size_m;
    const ring = [[x(160), y(360)], [x(240), y(360)], [x(240), y(300)], [x(160), y(300)], [x(160), y(360)]];
    const file = await scenarioFile('burn.json', {
      disturbances: [{ year: BURN_YEAR, kind: 'burn', polygon: { type: 'Polygon', coordinates: [ring] } }],
    });
    await page.setInputFiles('#scenario-input', file);
    await page.waitForFunction((n) => document.getElementById('field-n_years').value === String(n), N_YEARS);
    assert.equal(await runToEnd(), 'done', await page.locator('#run-status').innerText());

    const inside = await page.evaluate(() => window.forefield.cellHistory(200, 330));
    const at = (history, year) => history.stage[year - history.years[0]];
    assert.ok(at(inside, BURN_YEAR - 1) >= 5, `forest before the burn, stage ${at(inside, BURN_YEAR - 1)}`);
    assert.ok(at(inside, BURN_YEAR) <= 2, `bare or pioneer after it, stage ${at(inside, BURN_YEAR)}`);
    const coverBefore = inside.cover.reduce((sum, c) => sum + c[BURN_YEAR - 1 - inside.years[0]], 0);
    const coverAfter = inside.cover.reduce((sum, c) => sum + c[BURN_YEAR - inside.years[0]], 0);
    assert.ok(coverAfter < 0.2 * coverBefore, `cover ${coverBefore} before, ${coverAfter} after`);
    // The soil stays (a burn is secondary succession).
    assert.ok(inside.soil[BURN_YEAR - inside.years[0]] > 0.5 * inside.soil[BURN_YEAR - 1 - inside.years[0]]);

    const outside = await page.evaluate(() => window.forefield.cellHistory(120, 330));
    assert.equal(at(outside, BURN_YEAR), at(outside, BURN_YEAR - 1), 'a cell outside the polygon is not burnt');
  });

  test('a polygon file name is refused on the page with what to do instead', async () => {
    const { page } = session;
    const file = await scenarioFile('named.json', {
      disturbances: [{ year: BURN_YEAR, kind: 'debris_flow', polygon: 'slide.geojson' }],
    });
    await page.setInputFiles('#scenario-input', file);
    // Loading is asynchronous; the saved scenario shows when the file has been taken.
    await page.waitForFunction(() => Object.values(localStorage).some((v) => v.includes('slide.geojson')));
    assert.equal(await runToEnd(), 'failed');
    const alert = page.locator('#error-area');
    await alert.filter({ hasText: 'slide.geojson' }).waitFor();
    assert.match(await alert.innerText(), /write the polygon into the scenario as a GeoJSON object/);
    // The burn run's result stays on the map.
    assert.equal((await page.evaluate(() => window.forefield.state())).timeline.last_year, 2025 + N_YEARS);
  });
});
