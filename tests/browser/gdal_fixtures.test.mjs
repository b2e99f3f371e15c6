// The page against GeoTIFFs written by GDAL (tests/fixtures, see make_gdal_fixtures.sh): the
// readout must show the values this test decodes from the same files itself, slope and
// aspect must match gdaldem's Horn results, and files GDAL wrote that the model cannot use
// must be refused without losing the map.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { readGeoTiff } from './tiff_reader.mjs';
import {
  chooseFiles, expectLoaded, expectRefused, fileInfoText, loadCount, mapSnapshot, pointAt,
  session, shownNumber, startPage, stopPage,
} from './harness.mjs';

const FIXTURES = join(dirname(fileURLToPath(import.meta.url)), '..', 'fixtures');
const fixture = (name) => join(FIXTURES, name);
const decode = (name) => readGeoTiff(new Uint8Array(readFileSync(fixture(name))));

// The codes grid as make_gdal_fixtures.sh defines it: 40 x 30 cells of 30 m, west 600000,
// north 5100900, cell (7, 3) nodata.
const CODES = { width: 40, height: 30, westM: 600000, northM: 5100900, cellSizeM: 30 };
const codesValue = (col, row) => 10 + col + 2 * row + ((col * row) % 7);
const CODES_NODATA = { col: 7, row: 3 };

async function loadFixture(name) {
  const loads = await loadCount();
  await chooseFiles(fixture(name));
  await expectLoaded(loads);
}

/** Engine readouts for every cell, in one trip into the page. */
async function allReadouts(width, height) {
  return session.page.evaluate(([w, h]) => {
    const cells = [];
    for (let row = 0; row < h; row += 1) {
      for (let col = 0; col < w; col += 1) cells.push(window.forefield.readoutAt(col, row));
    }
    return cells;
  }, [width, height]);
}

before(startPage);
after(stopPage);

describe('GeoTIFFs written by GDAL', () => {
  for (const name of [
    'gdal_f32_deflate_pred3.tif',
    'gdal_i16_tiled_deflate_pred2.tif',
    'gdal_u16_tiled_deflate_pred2_bigendian.tif',
    'gdal_f64_none_bigendian.tif',
  ]) {
    test(`${name}: every cell reads as decoded here`, async () => {
      const decoded = decode(name);
      assert.equal(decoded.width, CODES.width);
      // The file and the generator's formula agree, so the decoding here is trustworthy.
      assert.equal(decoded.values[5 * CODES.width + 11], codesValue(11, 5));

      await loadFixture(name);
      const info = await fileInfoText();
      assert.ok(info.includes(name));
      assert.match(info, /40 × 30 cells/);
      assert.match(info, /30\.00 m/);
      assert.match(info, /EPSG:32632/);
      assert.equal(await session.page.locator('#fi-nodata').innerText(), '1 cell');

      const readouts = await allReadouts(CODES.width, CODES.height);
      readouts.forEach((cell, cellIdx) => {
        const col = cellIdx % CODES.width;
        const row = Math.floor(cellIdx / CODES.width);
        if (decoded.values[cellIdx] === decoded.nodata) {
          assert.equal(cell.elevation_m, null, `(${col}, ${row}) should be nodata`);
        } else {
          assert.equal(cell.elevation_m, decoded.values[cellIdx], `value at (${col}, ${row})`);
        }
      });
      assert.equal(readouts[CODES_NODATA.row * CODES.width + CODES_NODATA.col].elevation_m, null);

      const shown = await pointAt(23, 17);
      assert.equal(shownNumber(shown.elevation), codesValue(23, 17));
      assert.equal(shownNumber(shown.easting), CODES.westM + 23.5 * CODES.cellSizeM);
      assert.equal(shownNumber(shown.northing), CODES.northM - 17.5 * CODES.cellSizeM);
      assert.equal((await pointAt(CODES_NODATA.col, CODES_NODATA.row)).elevation, 'no data');
    });
  }

  test('slope and aspect match gdaldem (Horn 1981) on smooth hills', async () => {
    const dem = decode('gdal_slopes_dem.tif');
    const slope = decode('gdal_slopes_slope_deg.tif');
    const aspect = decode('gdal_slopes_aspect_deg.tif');
    await loadFixture('gdal_slopes_dem.tif');
    const readouts = await allReadouts(dem.width, dem.height);
    let compared = 0;
    readouts.forEach((cell, cellIdx) => {
      const col = cellIdx % dem.width;
      const row = Math.floor(cellIdx / dem.width);
      // gdaldem leaves edges to its own extrapolation; compare the interior, where Horn's
      // 3 x 3 window lies wholly on the grid.
      if (col === 0 || row === 0 || col === dem.width - 1 || row === dem.height - 1) return;
      assert.ok(Math.abs(cell.slope_deg - slope.values[cellIdx]) < 0.01,
        `slope at (${col}, ${row}): ${cell.slope_deg} vs gdaldem ${slope.values[cellIdx]}`);
      if (slope.values[cellIdx] > 0.5) {
        const difference = Math.abs(cell.aspect_deg - aspect.values[cellIdx]);
        assert.ok(Math.min(difference, 360 - difference) < 0.05,
          `aspect at (${col}, ${row}): ${cell.aspect_deg} vs gdaldem ${aspect.values[cellIdx]}`);
      }
      compared += 1;
    });
    assert.equal(compared, (dem.width - 2) * (dem.height - 2));
    const shown = await pointAt(20, 15);
    assert.ok(Math.abs(shownNumber(shown.slope) - slope.values[15 * dem.width + 20]) <= 0.05);
  });

  test('files the model cannot use are refused by name and the map stays', async () => {
    await loadFixture('gdal_f32_deflate_pred3.tif');
    const kept = { snapshot: await mapSnapshot(), info: await fileInfoText() };
    const refusals = {
      'gdal_truncated.tif': /corrupt|truncated/i,
      'gdal_two_bands.tif': /band/i,
      'gdal_rotated.tif': /rotated|sheared/i,
      'gdal_geographic.tif': /geographic/i,
      'gdal_nonsquare.tif': /square/i,
    };
    for (const [name, problem] of Object.entries(refusals)) {
      await chooseFiles(fixture(name));
      const message = await expectRefused(name);
      assert.match(message, problem);
      assert.equal((await mapSnapshot()).hash, kept.snapshot.hash, `${name} changed the map`);
      assert.equal(await fileInfoText(), kept.info, `${name} changed the file info`);
    }
  });

  test('logs no errors and asks nothing of any other origin', () => {
    assert.deepEqual(session.foreignRequests, []);
    assert.deepEqual(session.consoleErrors, []);
  });
});
