// The published page (`./build.sh dist`): dist/forefield.html opened alone from file:// in
// Debian's Chromium and Firefox ESR, and dist/ served and then used with the server gone. Each
// runs the sample valley and exports the PNG snapshot, and no request may leave the page.

import { after, before, describe, test } from 'node:test';
import assert from 'node:assert/strict';
import { spawn } from 'node:child_process';
import { copyFileSync, existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { chromium } from 'playwright-core';
import puppeteer from 'puppeteer-core';
import { PNG } from 'pngjs';
import { ARTIFACTS, CHROMIUM } from './harness.mjs';

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const DIST = process.env.FOREFIELD_DIST ?? join(ROOT, 'dist');
const CLI = process.env.FOREFIELD_CLI ?? join(ROOT, 'target', 'release', 'forefield');
const FIREFOX = '/usr/bin/firefox-esr';
const YEARS = 5;

/** The one file alone in an empty folder, as a planner receives it: nothing beside it to load. */
function singleFileAlone() {
  const dir = mkdtempSync(join(tmpdir(), 'forefield-onefile-'));
  const path = join(dir, 'forefield.html');
  copyFileSync(join(DIST, 'forefield.html'), path);
  return { dir, url: pathToFileURL(path).href };
}

/** Requests that are neither the page's own file nor blob:/data: URLs it made itself. */
function leaving(urls, pageUrl) {
  return urls.filter((url) => url !== pageUrl && !url.startsWith('blob:') && !url.startsWith('data:'));
}

// Runs before any page script: records policy violations, and keeps the last Blob a download
// link is made from (Firefox under WebDriver BiDi has no download event to wait on).
function watchPage() {
  window.policyViolations = [];
  document.addEventListener('securitypolicyviolation', (event) => {
    window.policyViolations.push(`${event.violatedDirective} ${event.blockedURI}`);
  });
  const make = URL.createObjectURL.bind(URL);
  URL.createObjectURL = (object) => {
    if (object instanceof Blob && object.type === 'image/png') window.lastPng = object;
    return make(object);
  };
}

/** The bytes of the PNG the page last offered for download. */
async function lastPngBytes(evaluate) {
  const base64 = await evaluate(async () => {
    const bytes = new Uint8Array(await window.lastPng.arrayBuffer());
    let text = '';
    for (let i = 0; i < bytes.length; i += 0x8000) text += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
    return btoa(text);
  });
  return Buffer.from(base64, 'base64');
}

function assertSnapshot(bytes, info) {
  const png = PNG.sync.read(bytes);
  assert.ok(png.width > info.n_cols && png.height >= info.n_rows, `${png.width} x ${png.height}`);
}

// The page's own steps, the same in both browsers: start, a short run, the PNG export.
const PAGE_STEPS = {
  started: () => ['ready', 'failed'].includes(document.body.dataset.state),
  years: (years) => {
    const field = document.getElementById('field-n_years');
    field.value = String(years);
    field.dispatchEvent(new Event('input', { bubbles: true }));
    field.dispatchEvent(new Event('change', { bubbles: true }));
  },
  finished: () => ['done', 'failed'].includes(document.body.dataset.run),
  report: () => ({
    state: document.body.dataset.state,
    run: document.body.dataset.run,
    status: document.getElementById('run-status').textContent,
    error: document.getElementById('error-area').hidden ? '' : document.getElementById('error-message').textContent,
    year: document.getElementById('year-label').textContent,
    info: window.forefield.info(),
    violations: window.policyViolations,
    policy: document.querySelector('meta[http-equiv="Content-Security-Policy"]').content,
  }),
};

describe('the one-file page from file://', () => {
  test('Chromium: opens alone, runs the sample, exports a PNG, and nothing leaves the file', async () => {
    assert.ok(existsSync(join(DIST, 'forefield.html')), 'run ./build.sh dist first');
    const { dir, url } = singleFileAlone();
    const browser = await chromium.launch(CHROMIUM);
    try {
      const context = await browser.newContext({ viewport: { width: 1280, height: 800 }, acceptDownloads: true });
      const requests = [];
      context.on('request', (request) => requests.push(request.url()));
      const errors = [];
      const page = await context.newPage();
      page.on('console', (message) => { if (message.type() === 'error') errors.push(message.text()); });
      page.on('pageerror', (error) => errors.push(error.message));
      await page.addInitScript(watchPage);
      await page.goto(url);
      await page.waitForFunction(PAGE_STEPS.started, null, { timeout: 30000 });
      await page.evaluate(PAGE_STEPS.years, YEARS);
      await page.click('#run');
      await page.waitForFunction(PAGE_STEPS.finished, null, { timeout: 120000 });
      const report = await page.evaluate(PAGE_STEPS.report);
      assert.equal(report.state, 'ready');
      assert.equal(report.run, 'done', `${report.status} ${report.error}`);
      assert.equal(report.year, String(2025 + YEARS));
      const [download] = await Promise.all([page.waitForEvent('download'), page.click('#export-png')]);
      assert.equal(download.suggestedFilename(), `snapshot_ice_thickness_${2025 + YEARS}.png`);
      assertSnapshot(readFileSync(await download.path()), report.info);
      await page.screenshot({ path: join(ARTIFACTS, 'dist-single-file-chromium.png') });
      assert.deepEqual(leaving(requests, url), []);
      assert.deepEqual(report.violations, []);
      assert.doesNotMatch(report.policy, /'self'|https?:|\*/, 'the one file admits no origin');
      assert.deepEqual(errors, []);
    } finally {
      await browser.close();
      rmSync(dir, { recursive: true, force: true });
    }
  });

  test('Firefox ESR: opens alone, runs the sample and makes the PNG, with nothing leaving the file', async () => {
    assert.ok(existsSync(FIREFOX), `${FIREFOX} is missing: ./build.sh test installs Debian's firefox-esr`);
    const { dir, url } = singleFileAlone();
    const browser = await puppeteer.launch({
      browser: 'firefox', executablePath: FIREFOX, headless: true, protocol: 'webDriverBiDi',
    });
    try {
      const page = await browser.newPage();
      await page.setViewport({ width: 1280, height: 800 });
      const requests = [];
      page.on('request', (request) => requests.push(request.url()));
      const errors = [];
      page.on('pageerror', (error) => errors.push(error.message));
      await page.evaluateOnNewDocument(watchPage);
      await page.goto(url);
      await page.waitForFunction(PAGE_STEPS.started, { timeout: 60000 });
      await page.evaluate(PAGE_STEPS.years, YEARS);
      await page.click('#run');
      await page.waitForFunction(PAGE_STEPS.finished, { timeout: 120000 });
      const report = await page.evaluate(PAGE_STEPS.report);
      assert.equal(report.state, 'ready');
      assert.equal(report.run, 'done', `${report.status} ${report.error}`);
      assert.equal(report.year, String(2025 + YEARS));
      await page.click('#export-png');
      await page.waitForFunction(() => window.lastPng !== undefined, { timeout: 30000 });
      assertSnapshot(await lastPngBytes((fn) => page.evaluate(fn)), report.info);
      await page.screenshot({ path: join(ARTIFACTS, 'dist-single-file-firefox.png') });
      assert.deepEqual(leaving(requests, url), []);
      assert.deepEqual(report.violations, []);
      assert.deepEqual(errors, []);
    } finally {
      await browser.close();
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('dist/ served', () => {
  let server = null;
  let base = null;

  async function startServer() {
    const port = 20000 + Math.floor(Math.random() * 20000);
    server = spawn(CLI, ['serve', '--dir', DIST, '--port', String(port)], { stdio: 'ignore' });
    base = `http://127.0.0.1:${port}/`;
    for (let i = 0; i < 100; i += 1) {
      try {
        if ((await fetch(base)).ok) return;
      } catch {
        // not listening yet
      }
      await new Promise((resolve) => setTimeout(resolve, 100));
    }
    throw new Error(`forefield serve did not answer at ${base}`);
  }

  async function stopServer() {
    if (!server) return;
    const exited = new Promise((resolve) => server.once('exit', resolve));
    server.kill();
    await exited;
    server = null;
  }

  before(startServer);
  after(stopServer);

  test('lists every file of the page for the offline copy', () => {
    const listed = new Set(JSON.parse(readFileSync(join(DIST, 'offline-files.json'), 'utf8')));
    const walk = (dir, prefix = '') => readdirSync(dir, { withFileTypes: true }).flatMap((entry) => (
      entry.isDirectory() ? walk(join(dir, entry.name), `${prefix}${entry.name}/`) : [`${prefix}${entry.name}`]));
    const missing = walk(DIST).filter((path) => !listed.has(path)
      && !['sw.js', 'forefield.html', 'offline-files.json'].includes(path));
    assert.deepEqual(missing, []);
    assert.ok(listed.has('./') && listed.has('pkg/forefield_wasm_bg.wasm'));
  });

  test('after one visit it opens, runs the sample and exports a PNG with the server gone', async () => {
    const browser = await chromium.launch(CHROMIUM);
    try {
      const context = await browser.newContext({ viewport: { width: 1280, height: 800 }, acceptDownloads: true });
      const foreign = [];
      await context.route('**/*', (route) => {
        if (new URL(route.request().url()).origin === new URL(base).origin) return route.continue();
        foreign.push(route.request().url());
        return route.abort();
      });
      const page = await context.newPage();
      const errors = [];
      page.on('pageerror', (error) => errors.push(error.message));
      await page.addInitScript(watchPage);
      await page.goto(base);
      await page.waitForFunction(PAGE_STEPS.started, null, { timeout: 30000 });
      // The service worker has cached the page's files and controls the page.
      await page.waitForFunction(() => navigator.serviceWorker?.controller?.state === 'activated',
        null, { timeout: 30000 });

      await stopServer();
      await assert.rejects(fetch(base), 'the server is gone');
      await page.reload();
      await page.waitForFunction(PAGE_STEPS.started, null, { timeout: 30000 });
      await page.evaluate(PAGE_STEPS.years, YEARS);
      await page.click('#run');
      await page.waitForFunction(PAGE_STEPS.finished, null, { timeout: 120000 });
      const report = await page.evaluate(PAGE_STEPS.report);
      assert.equal(report.state, 'ready');
      assert.equal(report.run, 'done', `${report.status} ${report.error}`);
      assert.ok(report.info.n_cols > 0, 'the sample valley came from the offline copy');
      const [download] = await Promise.all([page.waitForEvent('download'), page.click('#export-png')]);
      assertSnapshot(readFileSync(await download.path()), report.info);
      await page.screenshot({ path: join(ARTIFACTS, 'dist-served-offline.png') });
      assert.deepEqual(foreign, []);
      assert.deepEqual(report.violations, []);
      assert.deepEqual(errors, []);
    } finally {
      await browser.close();
    }
  });
});
