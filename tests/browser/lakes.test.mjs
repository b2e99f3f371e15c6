// New lakes and steep bare ground, as a planner reads them in headless Chromium after a run
// of the sample: the overdeepened basin under the present ice shows as a lake once it and its
// shore are ice-free and not before (checked against the cell's history), the legend carries
// the caution, and the lake GeoTIFF (read by geotiff.js) holds a level water surface standing
// at the lowest bed cell of its shore: the spill point of a filled depression (Barnes, Lehman
// & Mulla 2014, Computers & Geosciences 62, section 2), with the bed computed here from the
// sample's DEM less the run's starting ice as the cell histories give it. Steep bare cells are
// checked against the readout's Horn slope and the cell's stage.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { fromArrayBuffer } from 'geotiff';
import {
  ARTIFACTS, colourAtCell, pointAt, session, shownNumber, startPage, stopPage, typeInto, exportFile,
} from './harness.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const SAMPLE = resolve(HERE, '..', '..', 'sample-grids');
// Long enough for the tongue to leave the basin (about 30 years with the default warming).
const YEARS = 45;
const CAUTION = /outburst floods.*local authorities and qualified professionals/s;

async function readTiff(bytes) {
  const tiff = await fromArrayBuffer(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.length));
  const image = await tiff.getImage();
  const [values] = await image.readRasters();
  return { image, values };
}

/** The legend ramp's colour at `value`, interpolated between its stops. */
function rampAt(stops, value) {
  const sorted = [...stops].sort((a, b) => a.value - b.value);
  const v = Math.min(sorted[sorted.length - 1].value, Math.max(sorted[0].value, value));
  const k = Math.max(0, sorted.findIndex((s) => s.value >= v) - 1);
  const [a, b] = [sorted[k], sorted[k + 1] ?? sorted[k]];
  const t = b.value > a.value ? (v - a.value) / (b.value - a.value) : 0;
  return a.rgb.map((c, i) => c + t * (b.rgb[i] - c));
}

const near = (shown, rgb, tolerance) => [0, 1, 2].every((c) => Math.abs(shown[c] - rgb[c]) <= tolerance);

/** Whether `shown` is `rgb` darkened by one shading factor in [lowest, 1], to rounding. */
function isShadeOf(shown, rgb, lowest) {
  const k = shown[1] / rgb[1];
  return k > lowest && k <= 1.01 && [0, 1, 2].every((c) => Math.abs(shown[c] - k * rgb[c]) <= 4);
}

async function showYear(year) {
  const { page } = session;
  await page.locator('#year-slider').focus();
  await page.keyboard.press('Home');
  for (let y = 2025; y < year; y += 1) await page.keyboard.press('ArrowRight');
  assert.equal(await page.locator('#year-label').innerText(), String(year));
}

let info;
let lastYear;

before(async () => {
  await startPage();
  const { page } = session;
  await typeInto('#field-n_years', String(YEARS));
  await page.click('#run');
  await page.waitForFunction(() => ['done', 'failed', 'invalid'].includes(document.body.dataset.run), null,
    { timeout: 240000 });
  assert.equal(await page.locator('body').getAttribute('data-run'), 'done', await page.locator('#run-status').innerText());
  info = await page.evaluate(() => window.forefield.info());
  lastYear = (await page.evaluate(() => window.forefield.state())).timeline.last_year;
});
after(stopPage);

describe('new lakes and steep bare ground', () => {
  let lake = null;

  test('both layers are offered after the run and the lake legend carries the caution', async () => {
    const { page } = session;
    const options = await page.locator('#layer option:not([disabled])').evaluateAll((all) => all.map((o) => o.value));
    assert.ok(options.includes('lakes') && options.includes('steep_bare'), options.join(' '));
    await page.selectOption('#layer', 'lakes');
    const legendText = await page.locator('#legend').innerText();
    assert.match(legendText, /New lakes \(potential\)/);
    assert.match(legendText, CAUTION);
    assert.match(legendText, /not a hazard assessment/);
    assert.match(await page.locator('#map').getAttribute('aria-label'), /New lakes.*not a hazard assessment/);
  });

  test('the lake GeoTIFF is a level water surface at the spill height of its shore', async () => {
    const { page } = session;
    const { name, bytes } = await exportFile('export-tif');
    assert.equal(name, `layer_lakes_${lastYear}.tif`);
    const { image, values: depth } = await readTiff(bytes);
    assert.equal(image.getWidth(), info.n_cols);
    assert.match(String(await image.fileDirectory.loadValue('ImageDescription')), /not hazard assessments/);
    const dem = (await readTiff(readFileSync(join(SAMPLE, 'valley_dem.tif')))).values;
    // The deepest lake cell, then its lake: 8-connected cells with a depth.
    let deepest = 0;
    for (let i = 0; i < depth.length; i += 1) if (depth[i] > depth[deepest]) deepest = i;
    assert.ok(depth[deepest] > 10, `deepest lake cell only ${depth[deepest]} m by ${lastYear}`);
    const nc = info.n_cols;
    const around = (i) => [-1, 0, 1].flatMap((dr) => [-1, 0, 1].map((dc) => [i % nc + dc, Math.floor(i / nc) + dr]))
      .filter(([c, r]) => c >= 0 && r >= 0 && c < nc && r < info.n_rows).map(([c, r]) => r * nc + c);
    const cells = new Set([deepest]);
    const shore = new Set();
    for (const i of cells) {
      for (const n of around(i)) {
        if (depth[n] > 0) cells.add(n);
        else shore.add(n);
      }
    }
    // The bed is the DEM less the ice the run was given (the run keeps it exactly; its own
    // starting ice has relaxed from that); the start ice of the run is read from each cell's
    // history.
    const givenIce = (await readTiff(readFileSync(join(SAMPLE, 'valley_ice_thickness.tif')))).values;
    const startIce = await page.evaluate((list) => {
      const { n_cols: n } = window.forefield.info();
      return list.map((i) => window.forefield.cellHistory(i % n, Math.floor(i / n)).ice_thickness_m[0]);
    }, [...cells, ...shore]);
    const bed = new Map([...cells, ...shore].map((i) => [i, dem[i] - givenIce[i]]));
    const levels = [...cells].map((i) => bed.get(i) + depth[i]);
    const level = levels.reduce((a, b) => a + b) / levels.length;
    for (const l of levels) assert.ok(Math.abs(l - level) < 0.06, `level ${l} vs ${level}`);
    const spill = Math.min(...[...shore].map((i) => bed.get(i)));
    assert.ok(Math.abs(spill - level) < 0.06, `spill ${spill} m, water at ${level} m`);
    assert.ok([...shore].every((i) => bed.get(i) >= level - 0.06), 'no shore cell lies below the water');
    // A lake of the basin: under ice at the start, more than 0.1 km2.
    const deepestIce = startIce[[...cells].indexOf(deepest)];
    assert.ok(deepestIce > 50, `${deepestIce} m of ice over the deepest cell at the start`);
    assert.ok(cells.size * info.cell_size_m ** 2 > 1e5, `${cells.size} cells`);
    // The page's yearly lake area is the file's lake cells.
    const areaText = await page.locator('#lake-area').innerText();
    assert.match(areaText, new RegExp(`in ${lastYear}: `));
    const fileArea = depth.filter((d) => d > 0).length * info.cell_size_m ** 2 / 1e6;
    assert.ok(Math.abs(Number(areaText.split(': ')[1].replace(/[^\d.]/g, '')) - fileArea) < 0.006,
      `${areaText}; the file has ${fileArea} km2`);
    lake = { col: deepest % nc, row: Math.floor(deepest / nc), depth: depth[deepest], cells: [...cells] };
  });

  test('a basin cell shows lake colour once the lake is ice-free and not before', async () => {
    const { page } = session;
    const legend = await page.evaluate(() => window.forefield.legend());
    const basinClass = legend.classes.find((c) => /against ice/.test(c.label)).rgb;
    const iceClass = legend.classes.find((c) => c.label === 'ice').rgb;
    const lakeColour = rampAt(legend.stops, lake.depth);
    const history = await page.evaluate(({ col, row }) => window.forefield.cellHistory(col, row), lake);
    // The year the whole lake was last ice-free from: every lake cell's history.
    const histories = await page.evaluate((cells) => cells.map((i) => {
      const { n_cols: nc } = window.forefield.info();
      return window.forefield.cellHistory(i % nc, Math.floor(i / nc)).ice_thickness_m;
    }), lake.cells);
    const allFree = (k) => histories.every((h) => h[k] === 0);
    const cellFree = history.ice_thickness_m.findIndex((h) => h === 0);
    assert.ok(cellFree > 0, 'the basin cell starts under ice');
    let firstLake = null;
    await showYear(history.years[0]);
    for (let k = 0; k < history.years.length; k += 1) {
      if (k > 0) await page.keyboard.press('ArrowRight');
      const shown = await colourAtCell(lake.col, lake.row);
      const isLake = near(shown, lakeColour, 3);
      if (history.ice_thickness_m[k] > 0) {
        assert.ok(!isLake && isShadeOf(shown, iceClass, 0.44), `${history.years[k]}: ice, shown ${shown}`);
      } else if (isLake) {
        firstLake ??= history.years[k];
      } else {
        assert.ok(isShadeOf(shown, basinClass, 0.7), `${history.years[k]}: ice-free basin, shown ${shown}`);
      }
      if (firstLake !== null) assert.ok(isLake, `${history.years[k]}: lake gone again, shown ${shown}`);
    }
    assert.ok(firstLake !== null, 'the lake never showed');
    // Not before the cell, nor any cell of the lake, is ice-free (the shore may hold it later).
    assert.ok(firstLake >= history.years[cellFree], `lake ${firstLake}, cell ice-free ${history.years[cellFree]}`);
    assert.ok(allFree(firstLake - history.years[0]), `part of the lake is under ice in ${firstLake}`);
    await page.locator('#legend').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(ARTIFACTS, 'lakes-layer.png') });
  });

  test('steep bare ground: steep by the readout, bare or pioneer by the history, one class', async () => {
    const { page } = session;
    await page.selectOption('#layer', 'steep_bare');
    await page.locator('#year-slider').focus();
    await page.keyboard.press('End');
    const legendText = await page.locator('#legend').innerText();
    assert.match(legendText, /Steep bare ground/);
    assert.match(legendText, CAUTION);
    const { name, bytes } = await exportFile('export-tif');
    assert.equal(name, `layer_steep_bare_${lastYear}.tif`);
    const { values: flags } = await readTiff(bytes);
    const steepClass = (await page.evaluate(() => window.forefield.legend())).classes[0].rgb;
    // Cells whose whole 3 x 3 window was ice-free at the start of the run, so the bed under
    // them is the DEM the readout's slope is taken on: a few the file marks, and a spread of
    // the others.
    const nc = info.n_cols;
    const fileIce = (await readTiff(readFileSync(join(SAMPLE, 'valley_ice_thickness.tif')))).values;
    const inside = (i) => i % nc > 2 && i % nc < nc - 3 && i > 3 * nc && i < flags.length - 3 * nc;
    // The run may move ice a little at the start (it runs on coarser blocks), so the file
    // picks candidates two cells clear of ice and the histories decide.
    const clear = (i) => [-2, -1, 0, 1, 2].every((dr) => [-2, -1, 0, 1, 2].every((dc) => fileIce[i + dr * nc + dc] === 0));
    const dry = (i) => page.evaluate(([c, r]) => [-1, 0, 1].every((dr) => [-1, 0, 1].every(
      (dc) => !window.forefield.cellHistory(c + dc, r + dr).covered_at_start)), [i % nc, Math.floor(i / nc)]);
    const marked = [];
    const others = [];
    for (let i = 0; i < flags.length; i += 1) {
      if (!inside(i) || !clear(i)) continue;
      const spaced = marked.length === 0 || i - marked[marked.length - 1] > 5000;
      if (flags[i] === 1 && marked.length < 6 && spaced && await dry(i)) marked.push(i);
      if (flags[i] === 0 && i % 2003 === 0 && others.length < 12 && await dry(i)) others.push(i);
    }
    assert.ok(marked.length >= 3, `${marked.length} steep bare cells on ground ice-free from the start`);
    for (const i of [...marked, ...others]) {
      const [col, row] = [i % nc, Math.floor(i / nc)];
      const slope = shownNumber((await pointAt(col, row)).slope);
      if (Math.abs(slope - 30) < 0.1) continue;
      const history = await page.evaluate(([c, r]) => window.forefield.cellHistory(c, r), [col, row]);
      const stage = history.stage[history.stage.length - 1];
      const expected = slope > 30 && (stage === 1 || stage === 2);
      assert.equal(flags[i], expected ? 1 : 0, `cell ${col},${row}: slope ${slope}, stage ${stage}`);
      if (expected) {
        await page.mouse.move(0, 0);
        assert.ok(isShadeOf(await colourAtCell(col, row), steepClass, 0.7), `cell ${col},${row} colour`);
      }
    }
    // Some steep bare ground exists at all, if not among the sampled cells.
    assert.ok(flags.some((f) => f === 1), 'no steep bare ground in the sample');
    await page.locator('#legend').scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(ARTIFACTS, 'steep-bare-layer.png') });
  });
});
