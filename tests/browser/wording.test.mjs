// The page's names and messages, in headless Chromium: one name for each thing (surface,
// exposure year, bare ground), the scenario form's units, ranges and Advanced group, and the
// run status saying what the next run uses, including a PNG height map that can only be
// viewed. The wording expected is the page's own, as the README sets it down; the outside
// anchors are the SI Brochure (BIPM 2019, 9th edition), whose degree Celsius is equal in size
// to the kelvin, so one symbol serves temperatures and their differences (section from
// memory), and ECMA-262's Number.MAX_SAFE_INTEGER, 2^53 - 1, the largest seed a page can hold
// exactly.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { writeFloat32GeoTiff, writeGrey16Png } from './fixture_writers.mjs';
import {
  ARTIFACTS, chooseFiles, expectLoaded, loadCount, session, startPage, stopPage, typeInto,
} from './harness.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const CLI = process.env.FOREFIELD_CLI ?? resolve(HERE, '..', '..', 'target', 'release', 'forefield');

before(startPage);
after(stopPage);

const texts = (selector) => session.page.locator(selector).allInnerTexts();

describe('names and messages', () => {
  test('the surface, the exposure year and bare ground are named the same everywhere on the page', async () => {
    const { page } = session;
    assert.equal(await page.locator('#layer option[value="terrain"]').innerText(), 'Surface elevation');
    assert.equal(await page.locator('#layer option[value="exposure_year"]').innerText(), 'Exposure year');
    const readout = await texts('#readout dt');
    assert.ok(readout.includes('Surface') && readout.includes('Exposure year'), readout.join(', '));
    assert.ok(!readout.includes('Elevation') && !readout.includes('Exposed'));
    assert.ok((await texts('.history-readout dt')).includes('Exposure year'));
    assert.ok((await texts('#file-info dt')).includes('Surface'));
    assert.match(await page.locator('#open-vegetation').getAttribute('title'), /1 bare ground, 2 pioneer/);
    const legend = await page.evaluate(() => window.forefield.legend());
    assert.equal(legend.title, 'Surface elevation');
    assert.match(await page.locator('#open-terrain').getAttribute('title'), /PNG height map .*to view only: runs need a GeoTIFF/);
    assert.equal(await page.locator('#run-status').innerText(), 'Runs use the sample valley with its own ice and vegetation grids.');
  });

  test('the form names each unit once, temperatures in °C, and the seed range in words', async () => {
    const { page } = session;
    // Folded groups render no text, so their labels are read as text content.
    const labels = await page.locator('#scenario-form .field > label').evaluateAll((ls) => ls.map((l) => l.textContent));
    assert.ok(labels.includes('Start year'), labels.join(' | '));
    for (const label of labels) {
      assert.doesNotMatch(label, /year.*\(years?\)/i, 'a label that names years carries no "(year)"');
      assert.doesNotMatch(label, /\((?:[^)]* )?(?:C|K|C\/decade|m\/K|degrees C)(?: [^)]*)?\)/, `one temperature style: ${label}`);
    }
    assert.ok(labels.includes('Warming rate (°C per decade)'), labels.join(' | '));
    assert.ok(labels.includes('Lapse rate (°C per km)'));
    const seedHint = await page.locator('#field-seed-hint').innerText();
    assert.match(seedHint, /Any whole number from 0 up to 2\^53 − 1\./);
    assert.doesNotMatch(seedHint, /9007199254740991/);
    const seedMax = await page.evaluate(async () => {
      const engine = await import('./pkg/forefield_wasm.js');
      return engine.scenarioSchema().fields.find((f) => f.path === 'seed').max;
    });
    assert.equal(seedMax, Number.MAX_SAFE_INTEGER, 'the words say the range the engine checks');
    await page.locator('details[data-group="run"]').evaluate((d) => { d.open = true; });
    await typeInto('#field-seed', '1e17');
    assert.equal(await page.locator('#field-seed-error').innerText(), 'Must be any whole number from 0 up to 2^53 − 1.');
    await typeInto('#field-seed', '0');
    assert.match(await page.locator('#field-vegetation-seed_bank-years_of_seed-hint').textContent(),
      /Burns come only from a scenario file's disturbances list/);
    assert.match(await page.locator('#field-vegetation-soil-q10-hint').textContent(), /10 °C more warmth/);
    assert.match(await page.locator('#field-mass_balance-calibration_target_mwe_per_a-hint').textContent(),
      /m w\.e\.: the depth of water/);
  });

  test('numerics and flow-law constants sit in an Advanced group, folded at first', async () => {
    const { page } = session;
    const advanced = page.locator('details[data-group="advanced"]');
    assert.equal(await advanced.evaluate((d) => d.open), false);
    assert.match(await advanced.locator('summary').innerText(), /^Advanced/);
    const paths = await advanced.locator('input').evaluateAll((inputs) => inputs.map((i) => i.name));
    assert.deepEqual(paths.sort(), ['flow.ice_cell_size_m', 'flow.ice_density_kg_m3', 'flow.rate_factor_pa3_s',
      'flow.sliding_pa3_m2_s', 'flow.time_step_fraction', 'vegetation.dispersal_cell_size_m']);
    assert.match(await page.locator('#field-flow-rate_factor_pa3_s-hint').textContent(), /rate factor A of Glen's flow law/);
    await advanced.locator('summary').click();
    await advanced.scrollIntoViewIfNeeded();
    await page.screenshot({ path: join(ARTIFACTS, 'form-advanced.png') });
    await advanced.locator('summary').click();
  });

  test('a PNG height map can be viewed, and the run status says runs need a GeoTIFF', async () => {
    const { page } = session;
    let loads = await loadCount();
    const png = writeGrey16Png({ width: 9, height: 7, level: (c, r) => 1000 + 37 * c + 101 * r });
    const sidecar = { west_m: 310000, north_m: 4700000, cell_size_m: 5, epsg: 32633,
      vertical_scale_m: 0.25, vertical_offset_m: 800 };
    await chooseFiles([
      { name: 'ridge.png', mimeType: 'image/png', buffer: Buffer.from(png) },
      { name: 'ridge.json', mimeType: 'application/json', buffer: Buffer.from(JSON.stringify(sidecar)) },
    ]);
    await expectLoaded(loads);
    assert.equal(await page.locator('#run-status').innerText(),
      'ridge.png is a PNG height map: it can be viewed, but runs need the terrain as a GeoTIFF.');
    await page.click('#run');
    assert.equal(await page.locator('#run-status').innerText(), 'Not run: runs need the terrain as a GeoTIFF.');

    loads = await loadCount();
    const plane = writeFloat32GeoTiff({ width: 12, height: 8, westM: 500000, northM: 5200000, cellSizeM: 10,
      epsg: 32632, elevation: (c, r) => 1500 + 7 * c - 11 * r });
    await chooseFiles([{ name: 'plane.tif', mimeType: 'image/tiff', buffer: Buffer.from(plane) }]);
    await expectLoaded(loads);
    assert.equal(await page.locator('#run-status').innerText(),
      'Runs use plane.tif; open its ice (Ice…: a thickness grid or a glacier outline) first.');
    assert.deepEqual(session.consoleErrors, []);
    assert.deepEqual(session.foreignRequests, []);
  });
});

describe('the command line', () => {
  test('run --help lists the plant types by name for cover layers', () => {
    const help = execFileSync(CLI, ['run', '--help'], { encoding: 'utf8' });
    assert.match(help, /cover:TYPE/);
    for (const name of ['pioneer_mosses_and_herbs', 'grasses_and_sedges', 'late_successional_conifers']) {
      assert.match(help, new RegExp(`cover:${name} \\(or cover:\\d\\)`));
    }
  });
});
