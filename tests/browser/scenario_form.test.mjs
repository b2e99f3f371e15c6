// The plant-type table of the scenario form, as a planner uses it in headless Chromium: every
// trait with the unit and range the engine enforces, an edit that reaches the worker's run and
// changes its numbers, a bad value flagged at its cell and never run, a reset of the table and
// of the whole form, edits kept across a reload and in the saved file, the layout at 1280 x 800,
// and the cell-history labels on one line.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import {
  ARTIFACTS, session, startPage, stopPage, typeInto,
} from './harness.mjs';

const YEARS = 5;

const cell = (row, trait) => `#pt-${row}-${trait}`;

/** The engine's own schema, defaults and check, from the page's copy of the wasm module. */
async function engineCall(fn, arg) {
  // One expression evaluated by the DevTools protocol: the page's policy forbids `new Function`.
  return session.page.evaluate(`(async () => {
    const engine = await import(new URL('pkg/forefield_wasm.js', document.baseURI).href);
    return (${fn.toString()})(engine, ${JSON.stringify(arg ?? null)});
  })()`);
}

/** What a screen reader is given for an element: role, name, description, invalid state
 *  (Chromium's accessibility tree, through the DevTools protocol). */
async function accessible(selector) {
  const cdp = await session.page.context().newCDPSession(session.page);
  try {
    const { root } = await cdp.send('DOM.getDocument');
    const { nodeId } = await cdp.send('DOM.querySelector', { nodeId: root.nodeId, selector });
    const { nodes: [node] } = await cdp.send('Accessibility.getPartialAXTree', { nodeId, fetchRelatives: false });
    return {
      role: node.role?.value,
      name: node.name?.value,
      description: node.description?.value ?? '',
      invalid: node.properties?.find((p) => p.name === 'invalid')?.value.value,
    };
  } finally {
    await cdp.detach();
  }
}

async function openPlants() {
  const group = session.page.locator('details[data-group="plants"]');
  if (!(await group.evaluate((d) => d.open))) await group.locator('summary').first().click();
}

/** Records what the page posts to its simulation worker (the scenario of each run). */
function recordWorkerMessages() {
  window.runMessages = [];
  const post = Worker.prototype.postMessage;
  Worker.prototype.postMessage = function record(message, ...rest) {
    if (message?.type === 'run') window.runMessages.push(message.scenarioJson);
    return post.call(this, message, ...rest);
  };
}

async function runAndWait() {
  const { page } = session;
  await page.click('#run');
  await page.waitForFunction(() => ['done', 'failed', 'invalid'].includes(document.body.dataset.run), null,
    { timeout: 180000 });
  return page.evaluate(() => document.body.dataset.run);
}

before(async () => {
  await startPage();
  // The recorder must be in place before main.js makes its worker.
  await session.page.addInitScript(recordWorkerMessages);
  await session.page.evaluate(() => localStorage.clear());
  await session.page.reload();
  await session.page.waitForFunction(() => document.body.dataset.state === 'ready');
});
after(stopPage);

describe('the plant-type table', () => {
  let defaults = null;
  let schemaTraits = null;

  test('has one row per default type and every trait with the unit and range the engine enforces', async () => {
    const { page } = session;
    defaults = JSON.parse(await engineCall((engine) => engine.defaultScenarioJson()));
    schemaTraits = (await engineCall((engine) => engine.scenarioSchema())).fields
      .filter((f) => f.path.startsWith('vegetation.types[].'));
    await openPlants();
    const rows = page.locator('#plant-table tbody tr');
    assert.equal(await rows.count(), defaults.vegetation.types.length);
    // Every trait of a plant type, as the engine writes it, has its column.
    const headers = await page.locator('#plant-table thead tr:first-child th[data-trait]').evaluateAll(
      (all) => all.map((th) => ({ trait: th.dataset.trait, text: th.innerText, title: th.title })));
    assert.deepEqual(headers.map((h) => h.trait).sort(), Object.keys(defaults.vegetation.types[0]).sort());
    assert.equal(headers[0].trait, 'name');
    const ranges = await page.locator('#plant-table .range-row > *').allInnerTexts();
    const dispersal = headers.findIndex((h) => h.trait === 'mean_dispersal_m');
    assert.match(headers[dispersal].text, /Mean dispersal\s+m$/);
    assert.ok(headers[dispersal].title.length > 20, 'the heading explains the trait');

    // Each shown range is the engine's: its ends are accepted, just beyond them is refused
    // with the trait named. The base type grows fast and never dies, so the rule that growth
    // must exceed mortality holds at every end.
    const numeric = headers.map((h, i) => ({ ...h, range: ranges[i] }))
      .filter((h) => /^-?[\d.e+-]+–-?[\d.e+-]+$/.test(h.range));
    assert.ok(numeric.length >= 15, `only ${numeric.length} columns show a range`);
    for (const { trait, range } of numeric) {
      const [min, max] = range.split('–').map(Number);
      const integer = schemaTraits.find((f) => f.path.endsWith(`.${trait}`)).kind === 'integer';
      const step = (end) => (integer ? 1 : Math.max(1, Math.abs(end)) * 1e-6);
      for (const [value, accepted] of [[min, true], [max, true], [max + step(max), false], [min - step(min), false]]) {
        const scenario = structuredClone(defaults);
        scenario.vegetation.types[0].growth_rate_per_a = 5;
        scenario.vegetation.types[0].mortality_per_a = 0;
        scenario.vegetation.types[0][trait] = value;
        const problem = await engineCall((engine, json) => engine.checkScenario(json), JSON.stringify(scenario));
        if (accepted) assert.equal(problem, null, `${trait} = ${value}: ${problem?.message}`);
        else assert.equal(problem?.field, `vegetation.types[0].${trait}`, `${trait} = ${value} should be refused`);
      }
    }
    // Each cell is named for screen readers by its type and column, and described by the
    // trait's explanation and its type's default.
    const input = page.locator(cell(4, 'mean_dispersal_m'));
    const read = await accessible(cell(4, 'mean_dispersal_m'));
    assert.equal(read.role, 'textbox');
    assert.equal(read.name, `${defaults.vegetation.types[4].name}: Mean dispersal (m)`);
    assert.match(read.description, /^Mean distance .* Range 1 to 5000 m\./);
    assert.match(read.description, new RegExp(`Default ${defaults.vegetation.types[4].mean_dispersal_m} m`));
    const kernel = await accessible(cell(1, 'kernel'));
    assert.equal(kernel.role, 'combobox');
    assert.match(kernel.description, /Default negative exponential/);
    assert.equal(await input.inputValue(), String(defaults.vegetation.types[4].mean_dispersal_m));
    assert.equal(await page.locator(cell(2, 'nitrogen_fixer')).isChecked(), defaults.vegetation.types[2].nitrogen_fixer);
    assert.equal(schemaTraits.length, headers.length);
  });

  test('is usable at 1280 x 800: scrolls inside the panel, the type name stays in view, nothing overlaps', async () => {
    const { page } = session;
    await page.locator('details[data-group="plants"]').scrollIntoViewIfNeeded();
    await page.locator('#plant-types-title').evaluate((el) => el.scrollIntoView({ block: 'start' }));
    await page.screenshot({ path: join(ARTIFACTS, 'form-plant-table.png') });
    const layout = await page.evaluate(() => {
      const panel = document.querySelector('.scenario-panel').getBoundingClientRect();
      const form = document.getElementById('scenario-form');
      const scroller = document.querySelector('.table-scroll');
      const box = scroller.getBoundingClientRect();
      const map = document.getElementById('map').getBoundingClientRect();
      const toolbar = document.querySelector('.toolbar');
      const page = document.scrollingElement;
      return {
        pageScrolls: page.scrollHeight > page.clientHeight || page.scrollWidth > page.clientWidth,
        toolbarOverflows: toolbar.scrollWidth > toolbar.clientWidth + 1,
        panel: { left: panel.left, right: panel.right, width: panel.width },
        map: { width: map.width },
        formOverflowsSideways: form.scrollWidth > form.clientWidth + 1,
        scroller: { left: box.left, right: box.right, scrolls: scroller.scrollWidth > scroller.clientWidth },
        // A heading whose text is cut or spills past its cell.
        clippedHeadings: [...document.querySelectorAll('#plant-table thead th')]
          .filter((th) => th.scrollWidth > th.clientWidth + 1).map((th) => th.innerText),
      };
    });
    assert.equal(layout.pageScrolls, false, 'the page itself should not scroll');
    assert.equal(layout.toolbarOverflows, false, 'the map tools should all stay reachable');
    assert.equal(layout.formOverflowsSideways, false, 'the form itself should not scroll sideways');
    assert.ok(layout.scroller.left >= layout.panel.left && layout.scroller.right <= layout.panel.right,
      `table box ${JSON.stringify(layout.scroller)} should sit inside the panel ${JSON.stringify(layout.panel)}`);
    assert.ok(layout.scroller.scrolls, 'the table scrolls sideways inside its box');
    assert.ok(layout.panel.width >= 450, `the open table widens the panel (${layout.panel.width} px)`);
    assert.ok(layout.map.width >= 300, `the map keeps room (${layout.map.width} px)`);
    assert.deepEqual(layout.clippedHeadings, []);

    // Scrolled to the far columns, the name column stays at the left edge and no trait cell
    // shows through it.
    await page.locator('.table-scroll').evaluate((el) => { el.scrollLeft = el.scrollWidth; });
    const sticky = await page.evaluate(() => {
      const scroller = document.querySelector('.table-scroll').getBoundingClientRect();
      const name = document.getElementById('pt-0-name').closest('th').getBoundingClientRect();
      const x = name.left + name.width / 2;
      const y = name.top + name.height / 2;
      return { scrollerLeft: scroller.left, nameLeft: name.left, topAtName: document.elementFromPoint(x, y)?.id };
    });
    assert.ok(Math.abs(sticky.nameLeft - sticky.scrollerLeft) <= 2, JSON.stringify(sticky));
    assert.equal(sticky.topAtName, 'pt-0-name');
    await page.screenshot({ path: join(ARTIFACTS, 'form-plant-table-scrolled.png') });
    await page.locator('.table-scroll').evaluate((el) => { el.scrollLeft = 0; });
  });

  test('an edited trait reaches the run and changes its numbers', async () => {
    const { page } = session;
    await page.locator('summary', { hasText: /^Run$/ }).first().evaluate((s) => { s.parentElement.open = true; });
    await typeInto('#field-n_years', String(YEARS));
    assert.equal(await runAndWait(), 'done', await page.locator('#run-status').innerText());
    const before = await page.evaluate(() => window.forefield.summary());

    await openPlants();
    await typeInto(cell(0, 'name'), 'test pioneers');
    // Pioneers that can only reach 1 % cover: their cover collapses.
    await typeInto(cell(0, 'max_cover'), '0.01');
    await typeInto(cell(4, 'mean_dispersal_m'), '250');
    await page.locator(cell(3, 'kernel')).selectOption({ label: 'Gaussian' });
    await page.locator(cell(1, 'nitrogen_fixer')).check();
    assert.equal(await page.locator(cell(0, 'max_cover')).getAttribute('aria-invalid'), 'false');
    assert.match(await page.locator(cell(0, 'max_cover')).evaluate((el) => el.parentElement.className), /changed/);
    assert.equal(await page.locator(cell(0, 'mean_dispersal_m')).evaluate((el) => el.parentElement.className), '');
    assert.equal(await runAndWait(), 'done', await page.locator('#run-status').innerText());

    // What the worker was given...
    const sent = await page.evaluate(() => window.runMessages.map((json) => JSON.parse(json)));
    assert.equal(sent.length, 2);
    const types = sent[1].vegetation.types;
    assert.equal(types[0].name, 'test pioneers');
    assert.equal(types[0].max_cover, 0.01);
    assert.equal(types[4].mean_dispersal_m, 250);
    assert.equal(types[3].kernel, 'gaussian');
    assert.equal(types[1].nitrogen_fixer, true);
    assert.deepEqual(types[2], defaults.vegetation.types[2]);
    // ...and what the engine made of it: the run's own type names, and pioneer cover that
    // falls from the default run's towards the new ceiling.
    const { timeline } = await page.evaluate(() => window.forefield.state());
    assert.equal(timeline.type_names[0], 'test pioneers');
    assert.match(await page.locator('#cover-layers option').first().innerText(), /test pioneers/);
    const after = await page.evaluate(() => window.forefield.summary());
    const pioneerBefore = before[before.length - 1].vegetation.mean_cover[0];
    const pioneerAfter = after[after.length - 1].vegetation.mean_cover[0];
    assert.ok(pioneerBefore > 0.02, `default pioneer cover ${pioneerBefore}`);
    assert.ok(pioneerAfter < pioneerBefore / 2, `pioneer cover ${pioneerAfter} vs ${pioneerBefore} by default`);
  });

  test('an invalid trait is flagged at its cell and nothing is sent to the engine', async () => {
    const { page } = session;
    const runsBefore = await page.evaluate(() => window.runMessages.length);
    const timelineBefore = (await page.evaluate(() => window.forefield.state())).timeline;
    await typeInto(cell(2, 'mean_dispersal_m'), '-5');
    const error = page.locator(`${cell(2, 'mean_dispersal_m')}-error`);
    await error.waitFor();
    assert.match(await error.innerText(), /between 1 and 5000 m/);
    assert.equal(await page.locator(cell(2, 'mean_dispersal_m')).getAttribute('aria-invalid'), 'true');
    const read = await accessible(cell(2, 'mean_dispersal_m'));
    assert.equal(read.invalid, 'true');
    assert.match(read.description, /Must be between 1 and 5000 m\.$/);
    await typeInto(cell(3, 'fecundity_per_m2_a'), 'many');
    assert.match(await page.locator(`${cell(3, 'fecundity_per_m2_a')}-error`).innerText(), /not a number/);
    await typeInto(cell(1, 'height_class'), '2.5');
    assert.match(await page.locator(`${cell(1, 'height_class')}-error`).innerText(), /whole number/);
    await page.screenshot({ path: join(ARTIFACTS, 'form-plant-table-invalid.png') });
    assert.equal(await runAndWait(), 'invalid');
    assert.match(await page.locator('#run-status').innerText(), /Not run/);
    assert.match(await page.locator('.form-message').innerText(), /nothing was sent/);
    assert.equal(await page.evaluate(() => document.activeElement.id), 'pt-1-height_class');
    // The bad text was never stored either.
    const stored = await page.evaluate(() => JSON.parse(localStorage.getItem('forefield.scenario.v1')));
    assert.equal(stored.vegetation.types[2].mean_dispersal_m, defaults.vegetation.types[2].mean_dispersal_m);

    // Each value alone in range, together against the engine's rule: the engine's check
    // names the cell before any run.
    await typeInto(cell(2, 'mean_dispersal_m'), '30');
    await typeInto(cell(3, 'fecundity_per_m2_a'), '400');
    await typeInto(cell(1, 'height_class'), '2');
    await typeInto(cell(2, 'mortality_per_a'), '0.3');
    assert.equal(await page.locator(cell(2, 'mortality_per_a')).getAttribute('aria-invalid'), 'false');
    assert.equal(await runAndWait(), 'invalid');
    assert.match(await page.locator('.form-message').innerText(), /engine refused.*types\[2\]\.growth_rate_per_a minus mortality_per_a/);
    assert.equal(await page.locator(cell(2, 'growth_rate_per_a')).getAttribute('aria-invalid'), 'true');
    assert.match(await page.locator(`${cell(2, 'growth_rate_per_a')}-error`).innerText(), /outside the valid range/);
    assert.equal(await page.evaluate(() => window.runMessages.length), runsBefore);
    assert.deepEqual((await page.evaluate(() => window.forefield.state())).timeline, timelineBefore);
    await typeInto(cell(2, 'mortality_per_a'), String(defaults.vegetation.types[2].mortality_per_a));
  });

  test('an edit survives a reload and is in the saved file; a file with three types gives three rows', async () => {
    const { page } = session;
    await page.reload();
    await page.waitForFunction(() => document.body.dataset.state === 'ready');
    await openPlants();
    assert.equal(await page.locator(cell(0, 'name')).inputValue(), 'test pioneers');
    assert.equal(await page.locator(cell(4, 'mean_dispersal_m')).inputValue(), '250');
    assert.equal(await page.locator(cell(3, 'kernel')).inputValue(), '"gaussian"');
    assert.equal(await page.locator(cell(1, 'nitrogen_fixer')).isChecked(), true);
    assert.match(await page.locator(cell(4, 'mean_dispersal_m')).evaluate((el) => el.parentElement.className), /changed/);
    assert.equal(await page.locator('#field-n_years').inputValue(), String(YEARS));

    const [download] = await Promise.all([page.waitForEvent('download'), page.click('#scenario-save')]);
    const saved = JSON.parse(await readFile(await download.path(), 'utf8'));
    assert.equal(saved.vegetation.types[4].mean_dispersal_m, 250);
    assert.equal(saved.vegetation.types[0].name, 'test pioneers');

    const three = structuredClone(saved);
    three.vegetation.types = saved.vegetation.types.slice(2);
    three.vegetation.types[0].min_soil_index = 0.15;
    const path = join(ARTIFACTS, 'three-types.json');
    await writeFile(path, JSON.stringify(three));
    await page.setInputFiles('#scenario-input', path);
    await page.locator('#plant-table tbody tr').nth(2).waitFor();
    await page.waitForFunction(() => document.querySelectorAll('#plant-table tbody tr').length === 3);
    assert.equal(await page.locator(cell(0, 'min_soil_index')).inputValue(), '0.15');
    assert.equal(await page.locator(cell(0, 'name')).inputValue(), saved.vegetation.types[2].name);
    assert.equal(await runAndWait(), 'done', await page.locator('#run-status').innerText());
    const { timeline } = await page.evaluate(() => window.forefield.state());
    assert.deepEqual(timeline.type_names, saved.vegetation.types.slice(2).map((t) => t.name));
  });

  test('reset of the table brings the default types back and keeps the other fields; the whole-form reset still works', async () => {
    const { page } = session;
    await page.click('#plant-types-reset');
    assert.equal(await page.locator('#plant-table tbody tr').count(), defaults.vegetation.types.length);
    for (const [row, type] of defaults.vegetation.types.entries()) {
      assert.equal(await page.locator(cell(row, 'name')).inputValue(), type.name);
      assert.equal(await page.locator(cell(row, 'mean_dispersal_m')).inputValue(), String(type.mean_dispersal_m));
      assert.equal(await page.locator(cell(row, 'min_soil_index')).inputValue(), String(type.min_soil_index));
    }
    assert.equal(await page.locator('#plant-table .changed').count(), 0);
    assert.equal(await page.locator('#field-n_years').inputValue(), String(YEARS));
    const stored = await page.evaluate(() => JSON.parse(localStorage.getItem('forefield.scenario.v1')));
    assert.deepEqual(stored.vegetation.types, defaults.vegetation.types);

    await typeInto(cell(4, 'age_first_seed_a'), '33');
    await page.click('#scenario-reset');
    assert.equal(await page.locator(cell(4, 'age_first_seed_a')).inputValue(), String(defaults.vegetation.types[4].age_first_seed_a));
    assert.equal(await page.locator('#field-n_years').inputValue(), String(defaults.n_years));
    await page.reload();
    await page.waitForFunction(() => document.body.dataset.state === 'ready');
    await openPlants();
    assert.equal(await page.locator(cell(4, 'age_first_seed_a')).inputValue(), String(defaults.vegetation.types[4].age_first_seed_a));
  });

  test('rows can be added and removed as far as the engine allows, and a new row reaches the run', async () => {
    const { page } = session;
    await typeInto('#field-n_years', String(YEARS));
    const rows = page.locator('#plant-table tbody tr');
    const n = defaults.vegetation.types.length;
    await page.click('#plant-types-add');
    assert.equal(await rows.count(), n + 1);
    assert.equal(await page.locator(cell(n, 'name')).inputValue(), `new type ${n + 1}`);
    assert.equal(await page.evaluate(() => document.activeElement.id), `pt-${n}-name`);
    // A copy of the last type, under a new name; it has no default, so every cell is marked.
    assert.equal(await page.locator(cell(n, 'mean_dispersal_m')).inputValue(),
      String(defaults.vegetation.types[n - 1].mean_dispersal_m));
    assert.match(await page.locator(cell(n, 'mean_dispersal_m')).evaluate((el) => el.parentElement.className), /changed/);
    await typeInto(cell(n, 'name'), 'dwarf willows');
    await page.locator(cell(n, 'growth_form')).selectOption({ label: 'shrub' });
    assert.equal(await runAndWait(), 'done', await page.locator('#run-status').innerText());
    const sent = JSON.parse(await page.evaluate(() => window.runMessages[window.runMessages.length - 1]));
    assert.equal(sent.vegetation.types.length, n + 1);
    assert.equal(sent.vegetation.types[n].growth_form, 'shrub');
    const { timeline } = await page.evaluate(() => window.forefield.state());
    assert.equal(timeline.type_names[n], 'dwarf willows');

    // Removing the first row keeps the others' defaults: they are matched by name.
    await page.click('#pt-0-remove');
    assert.equal(await rows.count(), n);
    assert.equal(await page.locator(cell(0, 'name')).inputValue(), defaults.vegetation.types[1].name);
    assert.match(await page.locator(cell(0, 'mean_dispersal_m')).getAttribute('aria-describedby'), /pt-0-mean_dispersal_m-default/);
    assert.match(await page.locator('#pt-0-mean_dispersal_m-default').textContent(),
      new RegExp(`Default ${defaults.vegetation.types[1].mean_dispersal_m} m`));
    assert.equal(await page.locator('#plant-table tbody tr:first-child .changed').count(), 0);

    // The engine's limits: the message says how many it takes, and nothing changes.
    for (let count = n; count < 8; count += 1) await page.click('#plant-types-add');
    assert.equal(await rows.count(), 8);
    await page.click('#plant-types-add');
    assert.equal(await rows.count(), 8);
    assert.match(await page.locator('#plant-types-message').innerText(), /9 types given; 1 to 8 allowed/);
    while (await rows.count() > 1) await page.click('#pt-0-remove');
    await page.click('#pt-0-remove');
    assert.equal(await rows.count(), 1);
    assert.match(await page.locator('#plant-types-message').innerText(), /0 types given/);
    await page.click('#plant-types-reset');
    assert.equal(await rows.count(), n);
    assert.equal(await page.locator('#plant-types-message').isVisible(), false);
  });

  test('the cell history labels each sit on one line at 1280 x 800', async () => {
    const { page } = session;
    await page.locator('details[data-group="plants"] > summary').click();
    await typeInto('#field-n_years', String(YEARS));
    assert.equal(await runAndWait(), 'done', await page.locator('#run-status').innerText());
    const point = await page.evaluate(() => window.forefield.cellCentreOnPage(200, 60));
    await page.mouse.click(point.x, point.y);
    await page.locator('#hi-cell').filter({ hasText: 'col 200, row 60' }).waitFor();
    await page.locator('#history').evaluate((el) => el.scrollIntoView({ block: 'end' }));
    await page.screenshot({ path: join(ARTIFACTS, 'history-panel.png') });
    // Lines a label's text takes: the distinct tops of its text boxes.
    const labels = await page.locator('#history dt').evaluateAll((all) => all.map((dt) => {
      const range = document.createRange();
      range.selectNodeContents(dt);
      const tops = new Set([...range.getClientRects()].map((r) => Math.round(r.top)));
      return { text: dt.innerText, lines: tops.size };
    }));
    for (const { text, lines } of labels) assert.equal(lines, 1, `“${text}” takes ${lines} lines`);
    // Labels and values do not overlap.
    const overlaps = await page.evaluate(() => {
      const boxes = [...document.querySelectorAll('#history dt, #history dd')].map((el) => el.getBoundingClientRect());
      let count = 0;
      for (let i = 0; i < boxes.length; i += 1) {
        for (let j = i + 1; j < boxes.length; j += 1) {
          const a = boxes[i];
          const b = boxes[j];
          if (a.left < b.right - 1 && b.left < a.right - 1 && a.top < b.bottom - 1 && b.top < a.bottom - 1) count += 1;
        }
      }
      return count;
    });
    assert.equal(overlaps, 0);
    assert.deepEqual(session.consoleErrors, []);
    assert.deepEqual(session.foreignRequests, []);
  });
});
