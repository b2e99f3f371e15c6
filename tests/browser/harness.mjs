// Shared set-up for the browser tests: headless Debian Chromium on the served page, every
// request and console error recorded, and small helpers that act as a planner would.

import assert from 'node:assert/strict';
import { mkdirSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium } from 'playwright-core';

export const PAGE_URL = process.env.FOREFIELD_URL ?? 'http://127.0.0.1:8765/';
const ORIGIN = new URL(PAGE_URL).origin;
/** Debian's Chromium, headless, with nothing of its own reaching out to the network. */
export const CHROMIUM = {
  executablePath: '/usr/bin/chromium',
  args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking',
    '--disable-component-update', '--no-first-run'],
};
export const ARTIFACTS = join(dirname(fileURLToPath(import.meta.url)), 'artifacts');

/** Parses "1,548.3 m" or "53.7°" as shown on the page. */
export function shownNumber(text) {
  const match = text.replace(/,/g, '').match(/-?\d+(\.\d+)?/);
  assert.ok(match, `expected a number in ${JSON.stringify(text)}`);
  return Number(match[0]);
}

/** The browser and page shared by one test file, and what was seen while it ran. */
export const session = {
  browser: null,
  page: null,
  consoleErrors: [],
  foreignRequests: [],
  ownRequests: [],
};

export async function mapSnapshot() {
  return session.page.evaluate(() => {
    const canvas = document.getElementById('map');
    const { data } = canvas.getContext('2d').getImageData(0, 0, canvas.width, canvas.height);
    // FNV-1a over every byte: any changed pixel changes the hash.
    let hash = 0x811c9dc5;
    const colours = new Set();
    let sum = 0;
    let sumSquares = 0;
    for (let i = 0; i < data.length; i += 4) {
      for (let k = 0; k < 4; k += 1) hash = Math.imul(hash ^ data[i + k], 0x01000193) >>> 0;
      colours.add((data[i] << 16) | (data[i + 1] << 8) | data[i + 2]);
      const luminance = 0.2126 * data[i] + 0.7152 * data[i + 1] + 0.0722 * data[i + 2];
      sum += luminance;
      sumSquares += luminance * luminance;
    }
    const n = data.length / 4;
    const mean = sum / n;
    return {
      hash,
      distinctColours: colours.size,
      luminanceSd: Math.sqrt(Math.max(0, sumSquares / n - mean * mean)),
    };
  });
}

/** The on-screen colour of a cell's centre, read from the visible canvas. */
export async function colourAtCell(col, row) {
  return session.page.evaluate(([c, r]) => {
    const canvas = document.getElementById('map');
    const rect = canvas.getBoundingClientRect();
    const point = window.forefield.cellCentreOnPage(c, r);
    const ratio = canvas.width / rect.width;
    const x = Math.floor((point.x - rect.left) * ratio);
    const y = Math.floor((point.y - rect.top) * ratio);
    return [...canvas.getContext('2d').getImageData(x, y, 1, 1).data.slice(0, 3)];
  }, [col, row]);
}

export async function fileInfoText() {
  return session.page.locator('#file-info').innerText();
}

export async function loadCount() {
  return Number(await session.page.locator('body').getAttribute('data-loads') ?? 0);
}

/** Puts the pointer over a cell and returns the readout panel as shown. */
export async function pointAt(col, row) {
  const point = await session.page.evaluate(([c, r]) => window.forefield.cellCentreOnPage(c, r), [col, row]);
  await session.page.mouse.move(point.x, point.y);
  await session.page.locator('#ro-cell').filter({ hasText: `col ${col}, row ${row}` }).waitFor();
  const read = async (id) => session.page.locator(`#ro-${id}`).innerText();
  return {
    easting: await read('easting'),
    northing: await read('northing'),
    elevation: await read('elevation'),
    slope: await read('slope'),
    aspect: await read('aspect'),
  };
}

/** Replaces a form field's text by typing, as a person would. */
export async function typeInto(selector, text) {
  const input = session.page.locator(selector);
  await input.click();
  await session.page.keyboard.press('Control+A');
  await session.page.keyboard.type(text);
}

/** Clicks an export button and returns the downloaded file's name and bytes. */
export async function exportFile(buttonId) {
  const { page } = session;
  const [download] = await Promise.all([page.waitForEvent('download'), page.click(`#${buttonId}`)]);
  const path = join(ARTIFACTS, download.suggestedFilename());
  await download.saveAs(path);
  return { name: download.suggestedFilename(), bytes: readFileSync(path) };
}

export async function chooseFiles(files) {
  await session.page.setInputFiles('#terrain-input', files);
}

/** Waits for a load that must succeed. */
export async function expectLoaded(previousLoads) {
  await session.page.waitForFunction((n) => Number(document.body.dataset.loads ?? 0) > n, previousLoads);
  assert.equal(await session.page.locator('#error-area').isVisible(), false);
}

/** Waits for the error area to name `fileName`, and returns its text. */
export async function expectRefused(fileName) {
  // The file error area, not the scenario form's own alert.
  const alert = session.page.locator('#error-area').filter({ hasText: fileName });
  await alert.waitFor();
  return alert.innerText();
}

/** Opens the served page in headless Debian Chromium at a laptop's window size. */
export async function startPage() {
  mkdirSync(ARTIFACTS, { recursive: true });
  session.browser = await chromium.launch(CHROMIUM);
  const context = await session.browser.newContext({ viewport: { width: 1280, height: 800 } });
  // Every request is seen here; anything for another origin is recorded and refused.
  await context.route('**/*', (route) => {
    const url = route.request().url();
    if (new URL(url).origin === ORIGIN) {
      session.ownRequests.push(url);
      return route.continue();
    }
    session.foreignRequests.push(url);
    return route.abort();
  });
  const page = await context.newPage();
  session.page = page;
  page.on('console', (message) => {
    if (message.type() === 'error') session.consoleErrors.push(message.text());
  });
  page.on('pageerror', (error) => session.consoleErrors.push(`page error: ${error.message}`));
  await page.goto(PAGE_URL);
  await page.waitForFunction(() => ['ready', 'failed'].includes(document.body.dataset.state), null,
    { timeout: 30000 });
  const state = await page.locator('body').getAttribute('data-state');
  assert.equal(state, 'ready', `the page did not start: ${await page.locator('#error-area').innerText()}`);
}

export async function stopPage() {
  await session.browser?.close();
}

