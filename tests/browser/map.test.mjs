// What a planner does with the first screen, in headless Chromium against the served page:
// the sample map appears, the readout is right, their own terrain loads, bad files are
// refused without losing the map, and nothing leaves the page's own origin.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { writeFloat32GeoTiff, writeGrey16Png } from './fixture_writers.mjs';
import {
  ARTIFACTS, chooseFiles, colourAtCell, expectLoaded, expectRefused, fileInfoText, loadCount,
  mapSnapshot, pointAt, session, shownNumber, startPage, stopPage,
} from './harness.mjs';

// A 12 x 8 tilted plane with one raised cell, 10 m cells, UTM-like coordinates. On the plane
// the gradient is the same everywhere, so slope and aspect have exact expected values.
const PLANE = { width: 12, height: 8, westM: 500000, northM: 5200000, cellSizeM: 10, epsg: 32632 };
const EAST_RISE_PER_CELL = 7.25;
const SOUTH_DROP_PER_CELL = 11.5;
const BUMP = { col: 9, row: 5, heightM: 40.5 };
function planeElevation(col, row) {
  const bump = col === BUMP.col && row === BUMP.row ? BUMP.heightM : 0;
  return 1500 + EAST_RISE_PER_CELL * col - SOUTH_DROP_PER_CELL * row + bump;
}
const planeTiff = writeFloat32GeoTiff({ ...PLANE, elevation: planeElevation });

before(startPage);
after(stopPage);

describe('the Forefield page', () => {
  test('shows the sample valley as a map with legend and file info', async () => {
    assert.equal(await loadCount(), 1, 'the sample should have loaded once');
    const info = await session.page.evaluate(() => window.forefield.info());
    assert.equal(info.file_name, 'valley_dem.tif');
    assert.ok(info.max_elevation_m > info.min_elevation_m);

    const snapshot = await mapSnapshot();
    assert.ok(snapshot.distinctColours > 200, `only ${snapshot.distinctColours} colours on the map`);
    assert.ok(snapshot.luminanceSd > 10, `map brightness barely varies (sd ${snapshot.luminanceSd})`);

    // Colours follow the terrain: the highest and lowest of a coarse sample of cells differ.
    const { lowest, highest } = await session.page.evaluate(({ n_cols: nCols, n_rows: nRows }) => {
      let low = null;
      let high = null;
      for (let row = 2; row < nRows - 2; row += Math.ceil(nRows / 20)) {
        for (let col = 2; col < nCols - 2; col += Math.ceil(nCols / 20)) {
          const cell = window.forefield.readoutAt(col, row);
          if (cell?.elevation_m == null) continue;
          if (!low || cell.elevation_m < low.elevation_m) low = cell;
          if (!high || cell.elevation_m > high.elevation_m) high = cell;
        }
      }
      return { lowest: low, highest: high };
    }, info);
    assert.ok(highest.elevation_m - lowest.elevation_m > 100, 'the sample valley should have relief');
    const lowColour = await colourAtCell(lowest.col, lowest.row);
    const highColour = await colourAtCell(highest.col, highest.row);
    const difference = lowColour.reduce((sum, value, i) => sum + Math.abs(value - highColour[i]), 0);
    assert.ok(difference > 60, `low ${lowColour} and high ${highColour} cells look alike`);

    const legendText = await session.page.locator('#legend').innerText();
    assert.match(legendText, /Surface elevation \(m\)/);
    const legend = await session.page.evaluate(() => window.forefield.legend());
    assert.ok(legend.stops.length >= 2);
    assert.match(await fileInfoText(), /valley_dem\.tif/);

    const readout = await pointAt(lowest.col, lowest.row);
    assert.equal(shownNumber(readout.elevation), Number(lowest.elevation_m.toFixed(1)));
    await session.page.screenshot({ path: join(ARTIFACTS, 'sample-valley.png') });
  });

  test('reads back the values of a hand-written GeoTIFF', async () => {
    const before = await mapSnapshot();
    const loads = await loadCount();
    await chooseFiles({ name: 'tilted_plane.tif', mimeType: 'image/tiff', buffer: planeTiff });
    await expectLoaded(loads);

    const info = await fileInfoText();
    assert.match(info, /tilted_plane\.tif/);
    assert.match(info, /12 × 8 cells/);
    assert.match(info, /10\.00 m/);
    assert.match(info, /EPSG:32632/);
    const elevations = [];
    for (let row = 0; row < PLANE.height; row += 1) {
      for (let col = 0; col < PLANE.width; col += 1) elevations.push(planeElevation(col, row));
    }
    const oneDecimal = (value) => value.toLocaleString('en-GB', { minimumFractionDigits: 1, maximumFractionDigits: 1 });
    const range = `${oneDecimal(Math.min(...elevations))} to ${oneDecimal(Math.max(...elevations))} m`;
    assert.ok(info.includes(range), `expected ${range} in ${info}`);
    assert.notEqual((await mapSnapshot()).hash, before.hash, 'the map should have been redrawn');

    // The raised cell: elevation and cell-centre coordinates from the file's georeference.
    const bump = await pointAt(BUMP.col, BUMP.row);
    const bumpElevation = planeElevation(BUMP.col, BUMP.row);
    assert.ok(Math.abs(shownNumber(bump.elevation) - bumpElevation) <= 0.05, bump.elevation);
    assert.equal(shownNumber(bump.easting), PLANE.westM + (BUMP.col + 0.5) * PLANE.cellSizeM);
    assert.equal(shownNumber(bump.northing), PLANE.northM - (BUMP.row + 0.5) * PLANE.cellSizeM);
    const engineBump = await session.page.evaluate(([c, r]) => window.forefield.readoutAt(c, r), [BUMP.col, BUMP.row]);
    assert.ok(Math.abs(engineBump.elevation_m - bumpElevation) < 1e-3);

    // A cell whose whole 3 x 3 neighbourhood lies on the plane: the gradient is exact.
    const flat = await pointAt(4, 3);
    assert.ok(Math.abs(shownNumber(flat.elevation) - planeElevation(4, 3)) <= 0.05, flat.elevation);
    const eastGradient = EAST_RISE_PER_CELL / PLANE.cellSizeM;
    const northGradient = SOUTH_DROP_PER_CELL / PLANE.cellSizeM;
    const slopeDeg = (Math.atan(Math.hypot(eastGradient, northGradient)) * 180) / Math.PI;
    // Aspect is the compass direction the slope faces (downhill), clockwise from north.
    const aspectDeg = ((Math.atan2(-eastGradient, -northGradient) * 180) / Math.PI + 360) % 360;
    assert.ok(Math.abs(shownNumber(flat.slope) - slopeDeg) <= 0.05, `${flat.slope} vs ${slopeDeg}`);
    assert.ok(Math.abs(shownNumber(flat.aspect) - aspectDeg) <= 0.5, `${flat.aspect} vs ${aspectDeg}`);
    await session.page.screenshot({ path: join(ARTIFACTS, 'tilted-plane.png') });
  });

  test('loads a PNG height map dropped on the map together with its sidecar', async () => {
    const before = await mapSnapshot();
    const loads = await loadCount();
    const level = (col, row) => 1000 + 37 * col + 101 * row;
    const png = writeGrey16Png({ width: 9, height: 7, level });
    const sidecar = { west_m: 310000, north_m: 4700000, cell_size_m: 5, epsg: 32633,
      vertical_scale_m: 0.25, vertical_offset_m: 800 };
    const files = [
      { name: 'ridge.png', type: 'image/png', bytes: [...png] },
      { name: 'ridge.json', type: 'application/json', bytes: [...Buffer.from(JSON.stringify(sidecar))] },
    ];
    const dataTransfer = await session.page.evaluateHandle((list) => {
      const transfer = new DataTransfer();
      for (const file of list) {
        transfer.items.add(new File([new Uint8Array(file.bytes)], file.name, { type: file.type }));
      }
      return transfer;
    }, files);
    await session.page.dispatchEvent('#map-frame', 'drop', { dataTransfer });
    await expectLoaded(loads);
    assert.notEqual((await mapSnapshot()).hash, before.hash);
    const info = await fileInfoText();
    assert.match(info, /ridge\.png/);
    assert.match(info, /9 × 7 cells/);
    assert.match(info, /EPSG:32633/);
    const readout = await pointAt(6, 2);
    const expected = sidecar.vertical_offset_m + sidecar.vertical_scale_m * level(6, 2);
    assert.ok(Math.abs(shownNumber(readout.elevation) - expected) <= 0.05, readout.elevation);
    assert.equal(shownNumber(readout.easting), 310000 + 6.5 * 5);
  });

  test('shows a nodata cell as no data and counts it', async () => {
    const hole = { col: 2, row: 1 };
    const nodata = -9999;
    const tiff = writeFloat32GeoTiff({
      ...PLANE, width: 6, height: 5, nodata,
      elevation: (col, row) => (col === hole.col && row === hole.row ? nodata : 2000 + col + row),
    });
    const loads = await loadCount();
    await chooseFiles({ name: 'holed.tif', mimeType: 'image/tiff', buffer: tiff });
    await expectLoaded(loads);
    assert.equal(await session.page.locator('#fi-nodata').innerText(), '1 cell');
    assert.equal((await pointAt(hole.col, hole.row)).elevation, 'no data');
    assert.equal(shownNumber((await pointAt(4, 3)).elevation), 2007);
  });

  test('refuses bad files with a message naming them, and keeps the map it had', async () => {
    // Start again from the known plane so the kept map is the one the readout can check.
    const loads = await loadCount();
    await chooseFiles({ name: 'tilted_plane.tif', mimeType: 'image/tiff', buffer: planeTiff });
    await expectLoaded(loads);
    const kept = { snapshot: await mapSnapshot(), info: await fileInfoText() };

    const geographic = writeFloat32GeoTiff({
      ...PLANE, westM: 7.5, northM: 46.2, cellSizeM: 0.0001, epsg: 4326, geographic: true,
      elevation: planeElevation,
    });
    const badFiles = [
      { name: 'truncated_scan.tif', buffer: planeTiff.subarray(0, 120) },
      { name: 'field_notes.tif', buffer: Buffer.from('Not a terrain model, just notes.\n') },
      { name: 'lonely_height.png', buffer: writeGrey16Png({ width: 4, height: 4, level: () => 9 }) },
      { name: 'degrees_dem.tif', buffer: geographic },
    ];
    for (const bad of badFiles) {
      await chooseFiles({ name: bad.name, mimeType: 'application/octet-stream', buffer: bad.buffer });
      const message = await expectRefused(bad.name);
      assert.ok(message.length > bad.name.length + 10, `message too thin: ${message}`);
      assert.equal((await mapSnapshot()).hash, kept.snapshot.hash, `${bad.name} changed the map`);
      assert.equal(await fileInfoText(), kept.info, `${bad.name} changed the file info`);
      await session.page.screenshot({ path: join(ARTIFACTS, `refused-${bad.name.replace(/\W/g, '_')}.png`) });
    }
    // The kept terrain still answers for its cells.
    const readout = await pointAt(BUMP.col, BUMP.row);
    assert.ok(Math.abs(shownNumber(readout.elevation) - planeElevation(BUMP.col, BUMP.row)) <= 0.05);
  });

  test('pans and zooms with buttons and keys without changing what a cell reads', async () => {
    const before = await mapSnapshot();
    await session.page.getByRole('button', { name: 'Zoom in' }).click();
    await session.page.getByRole('button', { name: 'Zoom in' }).click();
    const zoomed = await mapSnapshot();
    assert.notEqual(zoomed.hash, before.hash);
    await session.page.locator('#map').focus();
    await session.page.keyboard.press('ArrowLeft');
    assert.notEqual((await mapSnapshot()).hash, zoomed.hash);
    const readout = await pointAt(4, 3);
    assert.ok(Math.abs(shownNumber(readout.elevation) - planeElevation(4, 3)) <= 0.05);
    await session.page.keyboard.press('0');
    // Moving the pointer hands the readout back from the keyboard cross, which then goes.
    await pointAt(4, 3);
    assert.equal((await mapSnapshot()).hash, before.hash, '0 should fit the grid as at load');
  });

  test('asks nothing of any other origin and logs no errors', async () => {
    assert.ok(session.ownRequests.some((url) => url.endsWith('.wasm')), 'the engine came from the page origin');
    assert.ok(session.ownRequests.some((url) => url.endsWith('valley_dem.tif')), 'so did the sample');
    assert.deepEqual(session.foreignRequests, []);
    assert.deepEqual(session.consoleErrors, []);
  });
});
