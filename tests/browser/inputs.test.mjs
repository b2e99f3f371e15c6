// The planner's own ice and vegetation inputs, in headless Chromium against the served page:
// a glacier outline (GeoJSON) whose thickness the engine estimates, an ice grid at twice the
// terrain's cell size that is resampled and said to be, and grids that cannot be used (another
// CRS, another place, impossible values) refused with the file named while what was chosen
// before stays.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { writeFloat32GeoTiff } from './fixture_writers.mjs';
import { readGeoTiff } from './tiff_reader.mjs';
import { expectRefused, session, startPage, stopPage } from './harness.mjs';

const SAMPLE = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'sample-grids');

async function inputCount() {
  return Number(await session.page.locator('body').getAttribute('data-inputs') ?? 0);
}

/** Picks a file for the ice or vegetation input and waits until the page has taken it. */
async function pickAccepted(input, file) {
  const before = await inputCount();
  await session.page.setInputFiles(input, file);
  await session.page.waitForFunction((n) => Number(document.body.dataset.inputs ?? 0) > n, before);
  assert.equal(await session.page.locator('#error-area').isVisible(), false);
}

/** A GeoTIFF in memory, handed to the file input as the planner's file. */
const tiffFile = (name, spec) => ({ name, mimeType: 'image/tiff', buffer: writeFloat32GeoTiff(spec) });

async function waitForRun() {
  await session.page.waitForFunction(() => ['done', 'failed'].includes(document.body.dataset.run), null,
    { timeout: 120000 });
}

before(startPage);
after(stopPage);

describe('ice and vegetation inputs', () => {
  test('the sample starts from its own ice and vegetation grids', async () => {
    assert.equal(await session.page.locator('#fi-ice').innerText(), 'sample ice grid');
    assert.equal(await session.page.locator('#fi-vegetation').innerText(), 'sample vegetation grid');
  });

  test('a glacier outline gives an estimated thickness that the run starts from', async () => {
    const { page } = session;
    await pickAccepted('#ice-input', join(SAMPLE, 'valley_glacier_outline.geojson'));
    assert.equal(await page.locator('#fi-ice').innerText(), 'valley_glacier_outline.geojson');
    const note = await page.locator('#fi-input-notes').innerText();
    assert.match(note, /perfect plasticity/);
    const noteArea = Number(note.match(/area ([\d.]+) km²/)[1]);
    assert.ok(noteArea > 0.5, `outline area ${noteArea} km²`);

    // Typed as a person would, so the form sees each key; no start-up relaxation, so the run
    // starts from the estimate itself.
    await page.locator('#field-n_years').click();
    await page.keyboard.press('Control+A');
    await page.keyboard.type('3');
    await page.locator('#field-relaxation_years').click();
    await page.keyboard.press('Control+A');
    await page.keyboard.type('0');
    await page.click('#run');
    await waitForRun();
    assert.equal(await page.locator('body').getAttribute('data-run'), 'done',
      await page.locator('#run-status').innerText());
    // The transfer onto the (coarser) ice grid conserves volume, so the run starts with the
    // outline's estimated volume; its area counts whole ice cells along the edge, so it may
    // exceed the outline's by up to a coarse cell along the perimeter.
    const noteVolume = Number(note.match(/volume ([\d.]+) km³/)[1]);
    const start = await page.evaluate(() => window.forefield.summary()[0]);
    assert.ok(Math.abs(start.ice_volume_km3 - noteVolume) / noteVolume < 0.01,
      `start ice volume ${start.ice_volume_km3} km³ vs outline estimate ${noteVolume} km³`);
    assert.ok(start.ice_area_km2 >= noteArea * 0.98 && start.ice_area_km2 < noteArea * 1.15,
      `start ice area ${start.ice_area_km2} km² vs outline ${noteArea} km²`);
    // The run fetched the sample's own vegetation grid and says so.
    assert.equal(await page.locator('#fi-vegetation').innerText(), 'valley_vegetation.tif');
  });

  test('an ice grid at twice the cell size is resampled, and the page says so', async () => {
    const info = await session.page.evaluate(() => window.forefield.info());
    const sampleIce = readGeoTiff(new Uint8Array(readFileSync(join(SAMPLE, 'valley_ice_thickness.tif'))));
    assert.equal(sampleIce.width, info.n_cols);
    const width = Math.floor(info.n_cols / 2);
    const height = Math.floor(info.n_rows / 2);
    // Block means of the sample's ice: the same glacier on 2 x 2 cells.
    const mean = (col, row) => {
      let sum = 0;
      for (const [dc, dr] of [[0, 0], [1, 0], [0, 1], [1, 1]]) {
        sum += sampleIce.values[(2 * row + dr) * sampleIce.width + 2 * col + dc];
      }
      return sum / 4;
    };
    await pickAccepted('#ice-input', tiffFile('coarse_ice.tif', {
      width, height, elevation: mean, westM: info.west_m, northM: info.north_m,
      cellSizeM: 2 * info.cell_size_m, epsg: info.epsg,
    }));
    assert.equal(await session.page.locator('#fi-ice').innerText(), 'coarse_ice.tif');
    assert.match(await session.page.locator('#fi-input-notes').innerText(),
      new RegExp(`coarse_ice\\.tif: resampled from ${width} x ${height} cells .* \\(bilinear\\)`));
  });

  test('grids that cannot be used are refused by name and the previous choice stays', async () => {
    const { page } = session;
    const info = await page.evaluate(() => window.forefield.info());
    const grid = { width: info.n_cols, height: info.n_rows, westM: info.west_m, northM: info.north_m,
      cellSizeM: info.cell_size_m, epsg: info.epsg };

    await page.setInputFiles('#vegetation-input', tiffFile('other_zone.tif', { ...grid, epsg: 32632, elevation: () => 3 }));
    assert.match(await expectRefused('other_zone.tif'), /EPSG:32632.*EPSG:32626/);
    await page.click('#error-dismiss');

    await page.setInputFiles('#vegetation-input', tiffFile('elsewhere.tif', { ...grid, westM: grid.westM + 1e6, elevation: () => 3 }));
    assert.match(await expectRefused('elsewhere.tif'), /does not overlap the terrain/);
    await page.click('#error-dismiss');

    await page.setInputFiles('#vegetation-input', tiffFile('codes.tif', { ...grid, elevation: (c) => (c === 5 ? 9 : 3) }));
    assert.match(await expectRefused('codes.tif'), /succession stage code/);
    await page.click('#error-dismiss');

    await page.setInputFiles('#ice-input', tiffFile('negative_ice.tif', { ...grid, elevation: () => -4 }));
    // Says what is out of range and what the model takes.
    assert.match(await expectRefused('negative_ice.tif'), /a cell holds -4 m, outside the 0 to 5000 m the model takes for ice thickness/);

    // The resampled ice grid chosen before is still the one a run would use.
    assert.equal(await page.locator('#fi-ice').innerText(), 'coarse_ice.tif');
    assert.equal(await page.locator('#fi-vegetation').innerText(), 'valley_vegetation.tif');
  });

  test('a vegetation grid on the terrain cells is taken as it is', async () => {
    const info = await session.page.evaluate(() => window.forefield.info());
    await pickAccepted('#vegetation-input', tiffFile('stages.tif', {
      width: info.n_cols, height: info.n_rows, westM: info.west_m, northM: info.north_m,
      cellSizeM: info.cell_size_m, epsg: info.epsg, elevation: (col) => (col < 20 ? 6 : 1),
    }));
    assert.equal(await session.page.locator('#fi-vegetation').innerText(), 'stages.tif');
    assert.doesNotMatch(await session.page.locator('#fi-input-notes').innerText(), /stages\.tif/);
    assert.deepEqual(session.consoleErrors, []);
    assert.deepEqual(session.foreignRequests, []);
  });
});
