// A planner's own glacier in headless Chromium: a real-shaped DEM in UTM (a general-purpose
// library's bundled terrain, lifted to high-mountain heights; tests/fixtures/ridge_valley.md) with the
// glacier outline from an inventory in longitude/latitude, accepted and placed where the same
// outline in UTM lands; the run shows its calibrated ELA, relaxation and glacier domain in the
// run status and under the ELA field, the summary CSV states them, and the domain is a layer
// whose GeoTIFF holds the outline's cells; a domain the planner gives is used by the next run.
// A DEM over the model's cell limit opens, coarsened on load, with a note.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { writeFloat32GeoTiff } from './fixture_writers.mjs';
import { readGeoTiff } from './tiff_reader.mjs';
import {
  ARTIFACTS, chooseFiles, expectLoaded, exportFile, loadCount, session, startPage, stopPage, typeInto,
} from './harness.mjs';

const FIXTURES = join(dirname(fileURLToPath(import.meta.url)), '..', 'fixtures');

async function inputCount() {
  return Number(await session.page.locator('body').getAttribute('data-inputs') ?? 0);
}

async function pickIce(file) {
  const before = await inputCount();
  await session.page.setInputFiles('#ice-input', file);
  await session.page.waitForFunction((n) => Number(document.body.dataset.inputs ?? 0) > n, before);
  assert.equal(await session.page.locator('#error-area').isVisible(), false,
    await session.page.locator('#error-area').innerText());
}

const outlineArea = async () => {
  const note = await session.page.locator('#fi-input-notes').innerText();
  return Number(note.match(/area ([\d.]+) km²/)[1]);
};

before(startPage);
after(stopPage);

/** The glacier domain's area as the run status gives it, km². */
let runDomainKm2 = null;

describe('a planner\'s own glacier on real terrain', () => {
  test('an inventory outline in longitude/latitude is accepted on a UTM terrain, where the UTM outline lies', async () => {
    const loads = await loadCount();
    await chooseFiles(join(FIXTURES, 'ridge_valley_dem.tif'));
    await expectLoaded(loads);
    assert.equal(await session.page.locator('#fi-crs').innerText(), 'EPSG:32617');
    await pickIce(join(FIXTURES, 'ridge_valley_outline_utm.geojson'));
    const utmArea = await outlineArea();
    await pickIce(join(FIXTURES, 'ridge_valley_outline_lonlat.geojson'));
    assert.equal(await session.page.locator('#fi-ice').innerText(), 'ridge_valley_outline_lonlat.geojson');
    const lonLatArea = await outlineArea();
    // 3257 cells of 90 m (the fixture's own count) = 26.38 km².
    assert.ok(Math.abs(utmArea - 26.38) < 0.01, `UTM outline ${utmArea} km²`);
    assert.ok(Math.abs(lonLatArea - utmArea) / utmArea < 0.002, `${lonLatArea} km² against ${utmArea} km²`);
  });

  test('the run shows its calibrated ELA, relaxation and domain, and the summary CSV states them', async () => {
    const { page } = session;
    await typeInto('#field-n_years', '5');
    await page.click('#run');
    await page.waitForFunction(() => ['done', 'failed'].includes(document.body.dataset.run), null,
      { timeout: 120000 });
    assert.equal(await page.locator('body').getAttribute('data-run'), 'done',
      await page.locator('#run-status').innerText());
    const notes = await page.locator('#run-notes').innerText();
    assert.match(notes, /ELA [\d.]+ m in the start year \(calibrated to a mean balance of \+0\.00 m w\.e\.\/a/);
    assert.match(notes, /ice relaxed 10 years/);
    // The outline (26.38 km²), the ground touching it and the ground draining into them.
    const domainKm2 = Number(notes.match(/glacier domain ([\d.]+) km²/)[1]);
    assert.ok(domainKm2 > 26.38 && domainKm2 < 40, `domain ${domainKm2} km²`);
    runDomainKm2 = domainKm2;
    // Under the ELA field, in the Ice group (closed unless opened, so read its text).
    const fieldNote = await page.locator('#field-mass_balance-ela_m-note').evaluate(
      (note) => (note.hidden ? '' : note.textContent));
    assert.match(fieldNote, /^Last run: ELA [\d.]+ m in the start year/);
    await page.screenshot({ path: join(ARTIFACTS, 'real-terrain-run.png') });
    const summary = (await exportFile('export-summary')).bytes.toString('utf8');
    assert.match(summary, /# ice start: ELA [\d.]+ m in the start year \(calibrated/);
    const ela = Number(notes.match(/ELA ([\d.]+) m/)[1]);
    const firstRow = summary.split('\r\n').find((line) => line.startsWith('2025,'));
    assert.ok(Math.abs(Number(firstRow.split(",")[2]) - ela) <= 0.05, firstRow);
  });

  test('the glacier domain is a layer, and its GeoTIFF holds the outline\'s cells', async () => {
    const { page } = session;
    await page.selectOption('#layer', 'glacier_domain');
    await page.locator('#legend').filter({ hasText: 'Glacier domain' }).waitFor();
    await page.screenshot({ path: join(ARTIFACTS, 'real-terrain-domain.png') });
    const { name, bytes } = await exportFile('export-tif');
    assert.match(name, /^layer_glacier_domain_\d+\.tif$/);
    const grid = readGeoTiff(new Uint8Array(bytes));
    const inside = grid.values.filter((v) => v === 1).length;
    // The file holds the domain the run status gives, in cells of 90 m.
    assert.equal(inside, Math.round(runDomainKm2 / 0.0081));
    assert.deepEqual(session.consoleErrors, []);
    assert.deepEqual(session.foreignRequests, []);
  });

  test('a glacier domain the planner gives is checked when picked and used by the next run', async () => {
    const { page } = session;
    const before = await inputCount();
    await page.setInputFiles('#domain-input', join(FIXTURES, 'ridge_valley_outline_lonlat.geojson'));
    await page.waitForFunction((n) => Number(document.body.dataset.inputs ?? 0) > n, before);
    assert.equal(await page.locator('#fi-domain').innerText(), 'ridge_valley_outline_lonlat.geojson');
    assert.match(await page.locator('#fi-input-notes').innerText(),
      /ridge_valley_outline_lonlat\.geojson: glacier domain of 26\.3\d\d km² given/);
    await page.click('#run');
    await page.waitForFunction(() => ['done', 'failed'].includes(document.body.dataset.run), null,
      { timeout: 120000 });
    assert.equal(await page.locator('body').getAttribute('data-run'), 'done');
    assert.match(await page.locator('#run-notes').innerText(), /glacier domain 26\.3\d\d km² \(given\)/);
  });

  test('a DEM over the cell limit opens coarsened on load, and says so', async () => {
    const side = 2100; // 4.41 million cells, over the 4,194,304 the model holds
    const buffer = writeFloat32GeoTiff({
      width: side, height: side, westM: 400000, northM: 5100000, cellSizeM: 2, epsg: 32632,
      elevation: (col, row) => 2000 + col * 0.1 + row * 0.05,
    });
    const loads = await loadCount();
    await chooseFiles({ name: 'lidar_2m.tif', mimeType: 'image/tiff', buffer });
    await expectLoaded(loads);
    assert.equal(await session.page.locator('#fi-size').innerText(), '1,050 × 1,050 cells');
    assert.equal(await session.page.locator('#fi-cell').innerText(), '4.00 m');
    assert.match(await session.page.locator('#fi-notes').innerText(),
      /2100 x 2100 cells of 2 m coarsened on load to 1050 x 1050 cells of 4 m \(2 x 2 blocks, area mean/);
  });
});
