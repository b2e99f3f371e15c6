// Exports from the page, in headless Chromium: after a short run of the sample with plants,
// each export button gives a download (Playwright download events) that independent readers
// from the npm registry open: pngjs for the PNG, geotiff.js for the GeoTIFF, csv-parse for
// the CSVs (RFC 4180), and JSON.parse plus the RFC 7946 rules for the GeoJSON. The PNG, the
// summary and the cells CSV must be byte-identical to what the command line writes for the
// same scenario and seed.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { PNG } from 'pngjs';
import { fromArrayBuffer } from 'geotiff';
import { parse } from 'csv-parse/sync';
import {
  ARTIFACTS, session, startPage, stopPage, exportFile,
} from './harness.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const SAMPLE = resolve(HERE, '..', '..', 'sample-grids');
const CLI = process.env.FOREFIELD_CLI ?? resolve(HERE, '..', '..', 'target', 'release', 'forefield');
const YEARS = 12;
const CAUTION = /planning-level scenarios, not hazard assessments/;

/** CSV rows after the leading `#` comment lines, parsed as RFC 4180 with a header row. */
function readCsv(bytes) {
  const text = bytes.toString('utf8');
  const lines = text.split('\r\n');
  const comments = lines.filter((line) => line.startsWith('#'));
  const body = lines.filter((line) => !line.startsWith('#')).join('\r\n');
  return { comments, rows: parse(body, { columns: true, skip_empty_lines: true }) };
}

/** RFC 7946: a FeatureCollection of Features with Polygon or MultiPolygon geometry whose rings
 *  are closed, in WGS 84 longitude and latitude. */
function checkGeoJson(json) {
  assert.equal(json.type, 'FeatureCollection');
  assert.ok(!('crs' in json), 'RFC 7946 removed the crs member');
  for (const feature of json.features) {
    assert.equal(feature.type, 'Feature');
    assert.ok(['Polygon', 'MultiPolygon'].includes(feature.geometry.type));
    const polygons = feature.geometry.type === 'Polygon' ? [feature.geometry.coordinates] : feature.geometry.coordinates;
    for (const polygon of polygons) {
      for (const ring of polygon) {
        assert.ok(ring.length >= 4, 'a linear ring has at least four positions');
        assert.deepEqual(ring[0], ring[ring.length - 1], 'rings are closed');
        for (const [lon, lat] of ring) assert.ok(Math.abs(lon) <= 180 && Math.abs(lat) <= 90);
      }
    }
  }
}

/** iTXt and tEXt chunks of a PNG, walked by the chunk layout of the PNG specification
 *  (W3C PNG 3rd edition, 5.3 and 11.3.3): keyword -> text. */
function pngText(bytes) {
  const text = {};
  for (let at = 8; at + 8 <= bytes.length;) {
    const length = bytes.readUInt32BE(at);
    const type = bytes.toString('latin1', at + 4, at + 8);
    const data = bytes.subarray(at + 8, at + 8 + length);
    const nul = data.indexOf(0);
    if (type === 'tEXt') text[data.toString('latin1', 0, nul)] = data.toString('latin1', nul + 1);
    if (type === 'iTXt' && data[nul + 1] === 0) {
      // Uncompressed: keyword, flag, method, language tag, translated keyword, then UTF-8.
      let p = nul + 3;
      p = data.indexOf(0, p) + 1;
      p = data.indexOf(0, p) + 1;
      text[data.toString('latin1', 0, nul)] = data.toString('utf8', p);
    }
    at += 12 + length;
  }
  return text;
}

let scenarioJson;
let cliOut;
let shown;

before(async () => {
  await startPage();
  const { page } = session;
  await page.locator('#field-n_years').click();
  await page.keyboard.press('Control+A');
  await page.keyboard.type(String(YEARS));
  await page.click('#run');
  await page.waitForFunction(() => ['done', 'failed', 'invalid'].includes(document.body.dataset.run), null,
    { timeout: 180000 });
  assert.equal(await page.locator('body').getAttribute('data-run'), 'done', await page.locator('#run-status').innerText());
  scenarioJson = await page.evaluate(() => window.forefield.lastScenarioJson());
  await page.selectOption('#layer', 'stage');
  shown = await page.evaluate(() => window.forefield.state());

  // The same scenario through the command line, on the same sample files.
  const scenario = JSON.parse(scenarioJson);
  scenario.grids = {
    ...scenario.grids,
    surface_elevation: join(SAMPLE, 'valley_dem.tif'),
    ice_thickness: join(SAMPLE, 'valley_ice_thickness.tif'),
  };
  const dir = mkdtempSync(join(tmpdir(), 'forefield-export-'));
  writeFileSync(join(dir, 'scenario.json'), JSON.stringify(scenario));
  cliOut = join(dir, 'out');
  execFileSync(CLI, ['run', join(dir, 'scenario.json'), '--out', cliOut,
    '--vegetation', join(SAMPLE, 'valley_vegetation.tif'),
    '--years', String(shown.year), '--layers', 'stage', '--formats', 'png,csv'], { stdio: 'pipe' });
  // A plant type's layer named as the page names it.
  execFileSync(CLI, ['export', cliOut, '--years', String(shown.year), '--layers', 'cover:grasses and sedges',
    '--formats', 'tif'], { stdio: 'pipe' });
});
after(stopPage);

describe('exports of the layer and year on the map', () => {
  test('the PNG snapshot is the whole grid with its legend, and the command line writes the same bytes', async () => {
    const { name, bytes } = await exportFile('export-png');
    assert.equal(name, `snapshot_stage_${shown.year}.png`);
    const png = PNG.sync.read(bytes);
    const info = await session.page.evaluate(() => window.forefield.info());
    // One pixel per cell plus margins and the legend panel.
    assert.ok(png.width > info.n_cols && png.height >= info.n_rows, `${png.width} x ${png.height}`);
    // The map's stage colours are in the picture (the palette of the page's own legend).
    const legend = await session.page.evaluate(() => window.forefield.legend());
    const colours = new Set();
    for (let i = 0; i < png.data.length; i += 4) colours.add(`${png.data[i]},${png.data[i + 1]},${png.data[i + 2]}`);
    const present = legend.classes.filter((c) => colours.has(c.rgb.join(',')));
    assert.ok(present.length >= 3, `legend swatches in the PNG: ${present.map((c) => c.label)}`);
    const text = pngText(bytes);
    assert.match(text.Disclaimer ?? '', CAUTION);
    assert.match(text.Title ?? '', new RegExp(`Succession stage.*${shown.year}`));
    assert.match(text.Source ?? '', /seed \d+, Forefield engine/);
    assert.ok(bytes.equals(readFileSync(join(cliOut, name))), 'the page and the command line should write the same PNG');
  });

  test('the GeoTIFF holds the stage codes of the year, georeferenced like the terrain', async () => {
    const { name, bytes } = await exportFile('export-tif');
    assert.equal(name, `layer_stage_${shown.year}.tif`);
    const tiff = await fromArrayBuffer(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.length));
    const image = await tiff.getImage();
    const info = await session.page.evaluate(() => window.forefield.info());
    assert.equal(image.getWidth(), info.n_cols);
    assert.equal(image.getHeight(), info.n_rows);
    const [west, north] = image.getOrigin();
    assert.ok(Math.abs(west - info.west_m) < 1e-6 && Math.abs(north - info.north_m) < 1e-6);
    assert.deepEqual(image.getResolution().slice(0, 2), [info.cell_size_m, -info.cell_size_m]);
    assert.equal(image.getGeoKeys().ProjectedCSTypeGeoKey, info.epsg);
    assert.match(String(await image.fileDirectory.loadValue('ImageDescription')), CAUTION);
    const [codes] = await image.readRasters();
    // Cells the page's history reads for this year have the same stage in the file.
    for (const [col, row] of [[10, 10], [Math.floor(info.n_cols / 2), Math.floor(info.n_rows / 2)], [info.n_cols - 5, info.n_rows - 5]]) {
      const history = await session.page.evaluate(([c, r]) => window.forefield.cellHistory(c, r), [col, row]);
      const stage = history.stage[shown.year - history.years[0]];
      assert.equal(codes[row * info.n_cols + col], stage, `cell ${col}, ${row}`);
    }
  });

  test('the summary and cells CSVs have units in the header, the caution, and match the command line', async () => {
    const summary = await exportFile('export-summary');
    assert.equal(summary.name, 'summary.csv');
    const table = readCsv(summary.bytes);
    assert.ok(table.comments.some((line) => CAUTION.test(line)), table.comments.join('\n'));
    assert.equal(table.rows.length, YEARS + 1);
    const rows = await session.page.evaluate(() => window.forefield.summary());
    assert.equal(Number(table.rows[YEARS].year), rows[YEARS].year);
    assert.ok(Math.abs(Number(table.rows[YEARS].ice_area_km2) - rows[YEARS].ice_area_km2) < 1e-3);
    assert.ok(summary.bytes.equals(readFileSync(join(cliOut, 'summary.csv'))), 'summary.csv differs from the command line');

    const cells = await exportFile('export-cells');
    assert.equal(cells.name, `cells_${shown.year}.csv`);
    const cellTable = readCsv(cells.bytes);
    assert.ok(cellTable.comments.some((line) => CAUTION.test(line)));
    const header = Object.keys(cellTable.rows[0]);
    for (const column of ['easting_m', 'northing_m', 'ice_thickness_m', 'stage', 'soil_index']) {
      assert.ok(header.includes(column), `${column} in ${header}`);
    }
    assert.ok(header.some((column) => /^cover_.*_pct$/.test(column)), `cover columns in ${header}`);
    const info = await session.page.evaluate(() => window.forefield.info());
    assert.equal(cellTable.rows.length, info.n_cols * info.n_rows - info.nodata_cells);
    assert.ok(cells.bytes.equals(readFileSync(join(cliOut, `cells_${shown.year}.csv`))), 'the cells table differs from the command line');
    assert.match(await session.page.locator('#export-status').innerText(), new RegExp(`Saved cells_${shown.year}\\.csv`));
    // One exposure-year coding in every file: -1 ice-free at the start, empty under ice, as
    // the layer GeoTIFF (-1, nodata) and the notes above the header say.
    assert.ok(cellTable.comments.some((line) => /exposure_year: .*-1 ice-free at the start; empty under ice/.test(line)));
    assert.ok(cellTable.comments.some((line) => /ground_elevation_m: the ground, under the ice/.test(line)));
    const codes = new Set(cellTable.rows.map((row) => row.exposure_year));
    assert.ok(codes.has('-1') && codes.has(''), 'ice-free at the start and under ice both occur in the sample');
    const iceFreeAtStart = cellTable.rows.find((row) => row.exposure_year === '-1');
    assert.equal(Number(iceFreeAtStart.ice_thickness_m), 0);
  });

  test('a plant type\'s layer is named after the type, as on the command line', async () => {
    const { page } = session;
    const names = shown.timeline.type_names;
    const k = names.indexOf('grasses and sedges');
    assert.ok(k >= 0, names.join(', '));
    await page.selectOption('#layer', `cover:${k}`);
    const { name, bytes } = await exportFile('export-tif');
    assert.equal(name, `layer_cover_grasses_and_sedges_${shown.year}.tif`);
    assert.ok(bytes.equals(readFileSync(join(cliOut, name))), 'the page and the command line should write the same cover GeoTIFF');
    await page.selectOption('#layer', 'stage');
  });

  test('ice outlines and stage polygons are RFC 7946 GeoJSON whose areas match the grid', async () => {
    const { page } = session;
    const info = await page.evaluate(() => window.forefield.info());
    const first = shown.timeline.start_year;
    await page.fill('#export-ice-years', `${first}, ${shown.year}`);
    const ice = await exportFile('export-ice');
    assert.equal(ice.name, 'ice_outlines.geojson');
    const outlines = JSON.parse(ice.bytes.toString('utf8'));
    checkGeoJson(outlines);
    assert.deepEqual(outlines.features.map((f) => f.properties.year), [first, shown.year]);
    const rows = await page.evaluate(() => window.forefield.summary());
    // The outline's ice area is the ice-covered cells' area (the summary counts the ice grid).
    const area = outlines.features[0].properties.ice_area_m2 / 1e6;
    assert.ok(Math.abs(area - rows[0].ice_area_km2) / rows[0].ice_area_km2 < 0.1, `${area} vs ${rows[0].ice_area_km2} km²`);

    // The sample is in a UTM zone on WGS 84, so its GeoJSON is in longitude and latitude.
    assert.match(await page.locator('#export-stages').getAttribute('title'), /WGS 84 longitude and latitude, degrees, converted from WGS 84 \/ UTM zone 26N/);
    const stages = await exportFile('export-stages');
    assert.equal(stages.name, `stages_${shown.year}.geojson`);
    const polygons = JSON.parse(stages.bytes.toString('utf8'));
    checkGeoJson(polygons);
    const cells = polygons.features.reduce((sum, f) => sum + f.properties.cells, 0);
    assert.ok(cells > 0 && cells <= info.n_cols * info.n_rows);

    await page.fill('#export-ice-years', '1700');
    await page.click('#export-ice');
    assert.match(await page.locator('#export-status').innerText(), /Not exported: 1700 is outside the run/);
  });

  test('a cell history CSV after a click on the map', async () => {
    const { page } = session;
    assert.equal(await page.locator('#export-history').isDisabled(), true);
    const point = await page.evaluate(() => window.forefield.cellCentreOnPage(40, 30));
    await page.mouse.click(point.x, point.y);
    const history = await exportFile('export-history');
    assert.equal(history.name, 'cell_40_30_history.csv');
    const table = readCsv(history.bytes);
    assert.equal(table.rows.length, YEARS + 1);
    const shownHistory = await page.evaluate(() => window.forefield.cellHistory(40, 30));
    table.rows.forEach((row, i) => {
      assert.equal(Number(row.year), shownHistory.years[i]);
      assert.ok(Math.abs(Number(row.ice_thickness_m) - shownHistory.ice_thickness_m[i]) < 0.06);
    });
    await page.screenshot({ path: join(ARTIFACTS, 'exports-panel.png') });
    assert.deepEqual(session.consoleErrors, []);
    assert.deepEqual(session.foreignRequests, []);
  });
});
