// Zones on the page, in headless Chromium: a rectangle written here in the sample's CRS
// (EPSG:32626) from the terrain's own georeference is opened as a zone, a short run is made,
// and the zone table is checked against the cells' own histories (window.forefield.cellHistory,
// the cell-history path, not the zone code); the zone CSV download is read with csv-parse
// (RFC 4180) and must be byte-identical to `forefield export --zone` for the same run. A zone
// in degrees is converted to the terrain's UTM zone and, off the terrain, refused by name while
// the zone before stays; a zone drawn on the map counts the
// cells its corners enclose and its saved GeoJSON gives the command line the same table;
// a GeoJSON dropped on the map asks whether it is a zone, a glacier outline or a domain.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parse } from 'csv-parse/sync';
import { ARTIFACTS, expectRefused, session, startPage, stopPage } from './harness.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const SAMPLE = resolve(HERE, '..', '..', 'sample-grids');
const CLI = process.env.FOREFIELD_CLI ?? resolve(HERE, '..', '..', 'target', 'release', 'forefield');
const YEARS = 12;
// Across the glacier tongue of the sample: ice that melts out beside older ground.
const ZONE = { c0: 180, c1: 220, r0: 130, r1: 170 };

let info;
let dir;
let zonePath;
let runDir;

/** A GeoJSON rectangle along cell edges, in the terrain's CRS. */
function rectangle({ c0, c1, r0, r1 }) {
  const x = (c) => info.west_m + c * info.cell_size_m;
  const y = (r) => info.north_m - r * info.cell_size_m;
  const ring = [[x(c0), y(r1)], [x(c1), y(r1)], [x(c1), y(r0)], [x(c0), y(r0)], [x(c0), y(r1)]];
  return JSON.stringify({ type: 'FeatureCollection', features: [
    { type: 'Feature', properties: { name: 'tongue' }, geometry: { type: 'Polygon', coordinates: [ring] } }] });
}

async function zoneCount() {
  return Number(await session.page.locator('body').getAttribute('data-zones') ?? 0);
}

async function openZone(path) {
  const before = await zoneCount();
  await session.page.setInputFiles('#zone-input', path);
  await session.page.waitForFunction((n) => Number(document.body.dataset.zones ?? 0) > n, before);
}

/** The zone table as shown: year -> cell texts. */
async function tableRows() {
  return session.page.evaluate(() => Object.fromEntries([...document.querySelectorAll('#zone-table-body tr')]
    .map((tr) => [tr.dataset.year, [...tr.querySelectorAll('td')].map((td) => td.textContent)])));
}

before(async () => {
  await startPage();
  info = await session.page.evaluate(() => window.forefield.info());
  dir = mkdtempSync(join(tmpdir(), 'forefield-zones-'));
  zonePath = join(dir, 'tongue.geojson');
  writeFileSync(zonePath, rectangle(ZONE));
});
after(stopPage);

describe('a zone from GeoJSON', () => {
  test('opens before a run with its cell count and area', async () => {
    await openZone(zonePath);
    const n = (ZONE.c1 - ZONE.c0) * (ZONE.r1 - ZONE.r0);
    // Cells whose centre is inside a rectangle on cell edges: columns x rows; area = cells x
    // cell area (common practice, no source).
    const ha = (n * info.cell_size_m ** 2) / 1e4;
    assert.equal(await session.page.locator('#zone-summary').innerText(),
      `tongue.geojson: ${n.toLocaleString('en-GB')} cells, ${ha.toFixed(1)} ha`);
    assert.match(await session.page.locator('#zone-hint').innerText(), /Run the scenario/);
    assert.equal(await session.page.locator('#zone-csv').isDisabled(), true);
  });

  test('after a run the table agrees with the histories of the zone\'s cells', async () => {
    const { page } = session;
    await page.locator('#field-n_years').click();
    await page.keyboard.press('Control+A');
    await page.keyboard.type(String(YEARS));
    await page.click('#run');
    await page.waitForFunction(() => ['done', 'failed', 'invalid'].includes(document.body.dataset.run), null,
      { timeout: 180000 });
    assert.equal(await page.locator('body').getAttribute('data-run'), 'done');
    await page.locator('#zone-table-box').waitFor();
    const cells = await page.evaluate(({ c0, c1, r0, r1 }) => {
      const out = [];
      for (let r = r0; r < r1; r += 1) {
        for (let c = c0; c < c1; c += 1) {
          const h = window.forefield.cellHistory(c, r);
          out.push({ ice: h.ice_thickness_m.map((t) => t > 0), stage: h.stage, years: h.years });
        }
      }
      return out;
    }, ZONE);
    const years = cells[0].years;
    const cellHa = info.cell_size_m ** 2 / 1e4;
    const rows = await tableRows();
    const first = years[0];
    const last = years[years.length - 1];
    assert.deepEqual(Object.keys(rows).map(Number), [first, first + 10, last],
      'every tenth year and the last, which is also the year on the map');
    for (const year of Object.keys(rows).map(Number)) {
      const k = year - first;
      const withIce = cells.filter((cell) => cell.ice[k]).length;
      assert.equal(rows[year][0], (withIce * cellHa).toFixed(1), `ice area in ${year}`);
      const share = (codes) => (100 * cells.filter((cell) => codes.includes(cell.stage[k])).length
        / cells.length).toFixed(0);
      assert.deepEqual(rows[year].slice(1), [share([1]), share([2]), share([3]), share([4]), share([5, 6])],
        `stage shares in ${year}`);
    }
    assert.ok(rows[first][0] !== rows[last][0], 'the ice in the zone should change within the run');
    // Half ice-free: the first year at least half of the cells have no ice.
    const halfFree = years.find((_, k) => 2 * cells.filter((cell) => !cell.ice[k]).length >= cells.length);
    const keys = await page.locator('#zone-keys').innerText();
    assert.match(keys, new RegExp(`Half ice-free\\s+${halfFree ?? `not by ${last}`}`));
    assert.match(keys, /Half pioneer or later/);
    // Whole names, one per column, in the stage names the legend uses.
    const heads = await page.locator('#zone-table-head th').evaluateAll((ths) => ths.map((th) => th.firstChild.textContent.replace(/\u00ad/g, '')));
    assert.deepEqual(heads, ['Year', 'Ice area', 'Bare ground', 'Pioneer', 'Meadow', 'Shrubland', 'Forest']);
    // The year on the map is highlighted; moving the slider moves the highlight.
    await page.locator('#year-back').click();
    await page.locator(`#zone-table-body tr[data-year="${last - 1}"].zone-current`).waitFor();
    await page.locator('#zone-heading').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(ARTIFACTS, 'zones-panel.png') });
  });

  test('the zone CSV is RFC 4180 with units and caution, and the command line writes the same bytes', async () => {
    const { page } = session;
    const [download] = await Promise.all([page.waitForEvent('download'), page.click('#zone-csv')]);
    assert.equal(download.suggestedFilename(), 'zone_tongue_timeline.csv');
    const path = join(ARTIFACTS, download.suggestedFilename());
    await download.saveAs(path);
    const bytes = readFileSync(path);
    const text = bytes.toString('utf8');
    assert.match(text, /^# Forefield zone timeline\r\n/);
    assert.match(text, /# caution: .*planning-level scenarios, not hazard assessments/);
    assert.ok(text.split('\n').slice(0, -1).every((line) => line.endsWith('\r')), 'CRLF line ends (RFC 4180 2.1)');
    const body = text.split('\r\n').filter((line) => !line.startsWith('#')).join('\r\n');
    const rows = parse(body, { columns: true, skip_empty_lines: true });
    assert.equal(rows.length, YEARS + 1);
    for (const unit of ['ice_area_km2', 'ice_volume_km3', 'newly_exposed_area_km2', 'area_pioneer_km2', 'mean_soil_index']) {
      assert.ok(unit in rows[0], `column ${unit}`);
    }
    const zoneTimeline = await page.evaluate(() => window.forefield.zoneTimeline());
    rows.forEach((row, k) => {
      assert.equal(Number(row.year), zoneTimeline.years[k]);
      assert.ok(Math.abs(Number(row.ice_area_km2) - zoneTimeline.ice_area_km2[k]) <= 5e-7);
    });

    // The same run and zone through the command line.
    const scenario = JSON.parse(await page.evaluate(() => window.forefield.lastScenarioJson()));
    scenario.grids = {
      ...scenario.grids,
      surface_elevation: join(SAMPLE, 'valley_dem.tif'),
      ice_thickness: join(SAMPLE, 'valley_ice_thickness.tif'),
    };
    writeFileSync(join(dir, 'scenario.json'), JSON.stringify(scenario));
    const out = join(dir, 'out');
    runDir = out;
    execFileSync(CLI, ['run', join(dir, 'scenario.json'), '--out', out,
      '--vegetation', join(SAMPLE, 'valley_vegetation.tif'), '--formats', 'csv', '--years', 'start'], { stdio: 'pipe' });
    execFileSync(CLI, ['export', out, '--formats', '', '--zone', zonePath], { stdio: 'pipe' });
    assert.ok(bytes.equals(readFileSync(join(out, 'zone_tongue_timeline.csv'))),
      'the page and the command line should write the same zone CSV');
  });

  test('a zone in degrees is converted to the terrain\'s UTM zone; off the terrain it is refused by name and the zone before stays', async () => {
    const { page } = session;
    const before = await page.evaluate(() => window.forefield.zoneTimeline());
    const degrees = join(dir, 'lonlat.geojson');
    writeFileSync(degrees, JSON.stringify({ type: 'Polygon',
      coordinates: [[[-30.2, 44.8], [-30.1, 44.8], [-30.1, 44.9], [-30.2, 44.8]]] }));
    await page.setInputFiles('#zone-input', degrees);
    const message = await expectRefused('lonlat.geojson');
    // Converted to UTM 26N, it lands some 230 km west of the invented valley.
    assert.match(message, /cover no cell centre of the grid \(outline extent 2\d{5}\.\.2\d{5} E/);
    assert.match(await page.locator('#zone-summary').innerText(), /^tongue\.geojson:/);
    const after = await page.evaluate(() => window.forefield.zoneTimeline());
    assert.equal(after.name, 'tongue.geojson');
    assert.deepEqual(after.ice_area_km2, before.ice_area_km2);
  });

  test('a zone drawn on the map holds the cells its corners enclose, and its GeoJSON gives the command line the same table', async () => {
    const { page } = session;
    await page.click('#zone-draw');
    assert.equal(await page.locator('#zone-finish').isDisabled(), true, 'three corners at least');
    // Corners at the centres of these cells: the polygon's edges run through cell centres,
    // so by the half-open centre rule it takes columns 190-209 and rows 136-160.
    const corners = [[190, 135], [210, 135], [210, 160], [190, 160]];
    for (const [col, row] of corners) {
      const point = await page.evaluate(([c, r]) => window.forefield.cellCentreOnPage(c, r), [col, row]);
      await page.mouse.click(point.x, point.y);
    }
    assert.match(await page.locator('#zone-hint').innerText(), /4 so far/);
    await page.screenshot({ path: join(ARTIFACTS, 'zones-drawing.png') });
    assert.equal(await page.locator('#history').isHidden(), true, 'corners do not pick a cell');
    await page.click('#zone-finish');
    await page.locator('#zone-summary').filter({ hasText: 'drawn_zone.geojson' }).waitFor();
    assert.match(await page.locator('#zone-summary').innerText(), /^drawn_zone\.geojson: 500 cells, 31\.3 ha$/);
    assert.equal(await page.locator('#zone-draw').isVisible(), true);
    const save = async (id) => {
      const [download] = await Promise.all([page.waitForEvent('download'), page.click(id)]);
      const path = join(dir, download.suggestedFilename());
      await download.saveAs(path);
      return path;
    };
    const geojsonPath = await save('#zone-save');
    assert.ok(geojsonPath.endsWith('drawn_zone.geojson'));
    const csvPath = await save('#zone-csv');
    assert.ok(csvPath.endsWith('zone_drawn_zone_timeline.csv'));
    const cliDir = join(dir, 'cli');
    execFileSync(CLI, ['export', runDir, '--out', cliDir, '--formats', '', '--zone', geojsonPath], { stdio: 'pipe' });
    assert.ok(readFileSync(csvPath).equals(readFileSync(join(cliDir, 'zone_drawn_zone_timeline.csv'))),
      'the drawn zone\'s table from the page and from the command line should be the same bytes');
    // Escape leaves drawing without changing the zone.
    await page.click('#zone-draw');
    await page.keyboard.press('Escape');
    assert.equal(await page.locator('#zone-finish').isHidden(), true);
    assert.match(await page.locator('#zone-summary').innerText(), /^drawn_zone\.geojson:/);
  });

  test('a GeoJSON dropped on the map asks what it is: a zone, a glacier outline, or nothing', async () => {
    const { page } = session;
    const small = rectangle({ c0: 200, c1: 210, r0: 140, r1: 150 });
    const drop = (name) => page.evaluate(([text, fileName]) => {
      const data = new DataTransfer();
      data.items.add(new File([text], fileName, { type: 'application/geo+json' }));
      document.getElementById('map-frame').dispatchEvent(
        new DragEvent('drop', { dataTransfer: data, bubbles: true, cancelable: true }));
    }, [small, name]);
    const choice = page.locator('#drop-choice');
    const zonesBefore = await zoneCount();
    await drop('dropped.geojson');
    await choice.waitFor();
    assert.equal(await page.locator('#drop-choice-title').innerText(), 'What is dropped.geojson?');
    assert.deepEqual(await choice.locator('button').allInnerTexts(), ['Glacier outline', 'Glacier domain', 'Zone', 'Cancel']);
    await page.screenshot({ path: join(ARTIFACTS, 'zones-drop-choice.png') });
    await choice.locator('button', { hasText: 'Zone' }).click();
    await page.waitForFunction((n) => Number(document.body.dataset.zones ?? 0) > n, zonesBefore);
    assert.equal(await choice.isHidden(), true);
    assert.match(await page.locator('#zone-summary').innerText(), /^dropped\.geojson: 100 cells/);
    assert.doesNotMatch(await page.locator('#fi-ice').innerText(), /dropped/);
    // Cancel (or Escape) changes nothing.
    await drop('ignored.geojson');
    await choice.waitFor();
    await page.keyboard.press('Escape');
    assert.equal(await choice.isHidden(), true);
    assert.doesNotMatch(await page.locator('#fi-ice').innerText(), /ignored/);
    assert.match(await page.locator('#zone-summary').innerText(), /^dropped\.geojson:/);
    const inputsBefore = Number(await page.locator('body').getAttribute('data-inputs') ?? 0);
    await drop('outline.geojson');
    await choice.locator('button', { hasText: 'Glacier outline' }).click();
    await page.waitForFunction((n) => Number(document.body.dataset.inputs ?? 0) > n, inputsBefore);
    assert.equal(await page.locator('#fi-ice').innerText(), 'outline.geojson');
    assert.match(await page.locator('#zone-summary').innerText(), /^dropped\.geojson:/);
    assert.deepEqual(session.consoleErrors, []);
    assert.deepEqual(session.foreignRequests, []);
  });
});
