// Page boot and wiring: starts the engine, loads the bundled sample, and connects the map,
// the loaders, the legend, the readout, the error area, the scenario form, the run (in a
// worker), the time bar, the cell history and the charts. This thread only renders: runs
// happen in worker.js, which hands back the recorded timeline as one transferred buffer.

import { MapView } from './map.js';
import { attachLoaders, readTerrainSelection, SelectionError } from './loaders.js';
import { renderLegend } from './legend.js';
import { ScenarioForm } from './scenario_form.js';
import { TimeBar } from './timebar.js';
import { LineChart, MultiChart } from './charts.js';
import { ExportPanel } from './exports.js';
import { ZonePanel } from './zones.js';
import { ENGINE_WASM, fileUrl, keepForOffline, workerWasm } from './files.js';

const SAMPLE_URL = './sample-grids/valley_dem.tif';
const SAMPLE_ICE_URL = './sample-grids/valley_ice_thickness.tif';
const SAMPLE_VEGETATION_URL = './sample-grids/valley_vegetation.tif';
const SAMPLE_NAME = 'valley_dem.tif';

const element = (id) => document.getElementById(id);

const numberFormats = new Map();
/** Formats with thousands separators and a fixed number of decimals. */
function formatNumber(value, decimals = 0) {
  if (!numberFormats.has(decimals)) {
    numberFormats.set(decimals, new Intl.NumberFormat('en-GB', {
      minimumFractionDigits: decimals,
      maximumFractionDigits: decimals,
    }));
  }
  return numberFormats.get(decimals).format(value);
}

function showError(message, title = 'File not loaded') {
  element('error-message').closest('.error-area').querySelector('.error-title').textContent = title;
  element('error-message').textContent = message;
  element('error-area').hidden = false;
}

function clearError() {
  element('error-area').hidden = true;
  element('error-message').textContent = '';
}

function showInfo(info) {
  element('fi-name').textContent = info.file_name;
  element('fi-size').textContent =
    `${formatNumber(info.n_cols)} × ${formatNumber(info.n_rows)} cells`;
  element('fi-cell').textContent = `${formatNumber(info.cell_size_m, 2)} m`;
  element('fi-crs').textContent = info.epsg == null ? 'not given' : `EPSG:${info.epsg}`;
  element('fi-range').textContent =
    `${formatNumber(info.min_elevation_m, 1)} to ${formatNumber(info.max_elevation_m, 1)} m`;
  const nodata = info.nodata_cells ?? 0;
  element('fi-nodata').textContent = nodata === 0
    ? 'none'
    : `${formatNumber(nodata)} ${nodata === 1 ? 'cell' : 'cells'}`;
  const notes = element('fi-notes');
  notes.replaceChildren(...(info.notes ?? []).map((text) => {
    const item = document.createElement('li');
    item.textContent = text;
    return item;
  }));
}

const READOUT_FIELDS = ['easting', 'northing', 'elevation', 'slope', 'aspect', 'cell', 'ice', 'exposed'];

/**
 * Exposure as of `year` from a cell history: the latest year the cell went from ice to
 * ice-free at or before `year`, as the engine defines it.
 */
function exposureAsOf(history, year) {
  const index = Math.min(history.years.length - 1, year - history.years[0]);
  const ice = history.ice_thickness_m;
  if (ice[index] > 0) return { underIce: true, year: null };
  for (let i = index; i > 0; i -= 1) {
    if (ice[i] === 0 && ice[i - 1] > 0) return { underIce: false, year: history.years[i] };
  }
  return { underIce: false, year: null };
}

function exposureText(history, year) {
  const state = exposureAsOf(history, year);
  if (state.underIce) return `under ice in ${year}`;
  if (state.year != null) return `in ${state.year}`;
  return history.covered_at_start ? '–' : 'ice-free at the start';
}

function showReadout(cell, history = null, year = null) {
  const set = (name, text) => { element(`ro-${name}`).textContent = text; };
  if (cell && history) {
    const index = year - history.years[0];
    set('ice', `${formatNumber(history.ice_thickness_m[index], 1)} m in ${year}`);
    set('exposed', exposureText(history, year));
  } else {
    set('ice', '–');
    set('exposed', '–');
  }
  if (!cell) {
    READOUT_FIELDS.forEach((name) => set(name, '–'));
    element('readout-hint').textContent = 'Point at the map to read a cell.';
    return;
  }
  set('easting', `${formatNumber(cell.easting_m, 1)} m`);
  set('northing', `${formatNumber(cell.northing_m, 1)} m`);
  set('cell', `col ${cell.col}, row ${cell.row}`);
  if (cell.elevation_m == null) {
    set('elevation', 'no data');
    set('slope', '–');
    set('aspect', '–');
  } else {
    set('elevation', `${formatNumber(cell.elevation_m, 1)} m`);
    set('slope', cell.slope_deg == null ? '–' : `${formatNumber(cell.slope_deg, 1)}°`);
    // Flat cells have no aspect; the engine may say so with null.
    set('aspect', cell.aspect_deg == null ? 'flat' : `${formatNumber(cell.aspect_deg, 0)}°`);
  }
  element('readout-hint').textContent =
    'At the cell centre. Surface: the top of the ice, or the ground where there is no ice, as in the terrain file. Slope and aspect by Horn (1981).';
}

async function boot() {
  const mapMessage = element('map-message');
  let wasm;
  let engine;
  let workspace;
  try {
    // Imported here rather than at the top so a missing or broken engine build still
    // leaves a page that says what went wrong.
    engine = await import('./pkg/forefield_wasm.js');
    wasm = await engine.default({ module_or_path: fileUrl(ENGINE_WASM) });
    workspace = new engine.Workspace();
  } catch (error) {
    document.body.dataset.state = 'failed';
    mapMessage.textContent = 'The map engine could not start in this browser.';
    showError(`The map engine could not start: ${error.message ?? error}`);
    return;
  }

  let info = null;
  // The GeoTIFF bytes a run needs: the terrain as surface, and an ice-thickness grid.
  let surface = null;
  let ice = null;
  // Succession stage codes at the start (the sample has its own; other terrain starts from
  // each cell's potential vegetation).
  let vegetation = null;
  // A glacier domain the planner gave (else the engine's drainage rule).
  let domain = null;
  let lastRun = null;
  let summary = null;
  let summaryCsv = null;
  let timelineInfo = null;
  let exportPanel = null;
  let zonePanel = null;
  let layer = 'terrain';
  let selected = null;
  let selectedHistory = null;
  let hovered = null;
  let hoveredHistory = null;

  const currentYear = () => (timelineInfo ? timeBar.year() : null);

  const map = new MapView(element('map'), (cell) => {
    hovered = cell;
    hoveredHistory = cell && workspace.hasTimeline() ? workspace.cellHistory(cell.col, cell.row) : null;
    showReadout(cell && workspace.hasTerrain() ? workspace.readout(cell.col, cell.row) : null,
      hoveredHistory, currentYear());
  }, (cell) => (zonePanel?.drawing ? zonePanel.addCorner(cell) : selectCell(cell)));

  const areaChart = new LineChart(element('chart-area'), { title: 'Ice area', unit: 'km²', colour: '#2f6db0', decimals: 2 });
  const volumeChart = new LineChart(element('chart-volume'), { title: 'Ice volume', unit: 'km³', colour: '#1b306c', decimals: 3 });
  const historyChart = new LineChart(element('history-chart'), { title: 'Ice thickness here', unit: 'm', colour: '#2f6db0', decimals: 1 });
  const stageChart = new MultiChart(element('chart-stages'), { title: 'Ice-free area by stage', unit: 'km²', stacked: true, decimals: 1 });
  const coverChart = new MultiChart(element('history-cover'), { title: 'Cover here', unit: '%', max: 100 });
  // Names and colours of the stages, from the engine's stage legend after a run.
  let stageClasses = [];
  const rgbCss = ([r, g, b]) => `rgb(${r} ${g} ${b})`;
  // Line colours of the plant types, told apart by lightness as well as hue.
  const TYPE_COLOURS = ['#c9a227', '#6f9a3a', '#a0522d', '#2e8b6e', '#173f35', '#7a5c99', '#4c7fb0', '#8c8c8c'];

  /** Draws the current layer and year; the view over wasm memory is made afresh each time
   *  because an engine call may have grown (and so moved) that memory. */
  function drawMap({ keepView = true, legend = false } = {}) {
    if (!workspace.hasTerrain()) return;
    if (layer === 'terrain') workspace.renderTerrain();
    else workspace.renderLayer(layer, timeBar.year());
    const pixels = new Uint8ClampedArray(wasm.memory.buffer, workspace.imagePtr(), workspace.imageLen());
    map.setImage(new ImageData(pixels, workspace.imageWidth(), workspace.imageHeight()), info.cell_size_m, { keepView });
    if (legend) {
      renderLegend(element('legend'), layer === 'terrain' ? workspace.legend() : workspace.layerLegend(layer),
        (value) => formatNumber(value));
    }
    const typeName = layer.startsWith('cover:') ? timelineInfo.type_names[Number(layer.slice(6))] : '';
    const label = { terrain: 'Surface elevation over shaded relief',
      ice_thickness: `Ice thickness in ${currentYear()} over shaded relief`,
      exposure_year: `Year each cell became ice-free, as of ${currentYear()}`,
      stage: `Succession stage in ${currentYear()}`,
      soil: `Soil development index in ${currentYear()}`,
      lakes: `New lakes (potential) by depth in ${currentYear()}; a planning indication, not a hazard assessment`,
      steep_bare: `Steep bare ground in ${currentYear()}; a planning indication, not a hazard assessment`,
      glacier_domain: `Glacier domain (where snow may build ice), ice in ${currentYear()}` }[layer]
      ?? `Cover of ${typeName} in ${currentYear()}`;
    element('map').setAttribute('aria-label', label);
    const lakeArea = layer === 'lakes' ? timelineInfo.lake_area_km2[currentYear() - timelineInfo.start_year] : null;
    element('lake-area').hidden = lakeArea == null;
    element('lake-area').textContent = `New lakes free of ice in ${currentYear()}: ${formatNumber(lakeArea ?? 0, 2)} km²`;
    document.body.dataset.drawn = `${layer}:${currentYear() ?? ''}`;
  }

  const timeBar = new TimeBar({
    slider: element('year-slider'), back: element('year-back'), forward: element('year-forward'),
    play: element('play'), label: element('year-label'),
  }, (year) => {
    if (!timelineInfo) return;
    drawMap();
    areaChart.setMarker(year);
    volumeChart.setMarker(year);
    stageChart.setMarker(year);
    historyChart.setMarker(year);
    coverChart.setMarker(year);
    showHistoryYear(year);
    exportPanel?.refresh();
    zonePanel?.setYear();
    if (hovered) {
      showReadout(workspace.readout(hovered.col, hovered.row), hoveredHistory, year);
    }
  });

  function showHistoryYear(year) {
    if (!selectedHistory) return;
    element('hi-ice-label').textContent = `Ice in ${year}`;
    const index = year - selectedHistory.years[0];
    element('hi-ice').textContent = `${formatNumber(selectedHistory.ice_thickness_m[index], 1)} m`;
    element('hi-stage-label').textContent = `Stage in ${year}`;
    const stage = selectedHistory.stage[index];
    element('hi-stage').textContent = stage == null ? '–' : stageClasses[stage]?.label ?? String(stage);
  }

  /** The first year the cell is in each stage after the start, e.g. "meadow 2041". */
  function firstStageYears(history) {
    const seen = new Set([history.stage[0]]);
    const parts = [];
    history.stage.forEach((stage, i) => {
      if (seen.has(stage)) return;
      seen.add(stage);
      parts.push(`${stageClasses[stage]?.label ?? stage} ${history.years[i]}`);
    });
    return parts.length ? parts.join(', ') : `no change from ${stageClasses[history.stage[0]]?.label ?? '–'}`;
  }

  function selectCell(cell) {
    if (!workspace.hasTimeline()) return;
    selected = cell;
    selectedHistory = workspace.cellHistory(cell.col, cell.row);
    map.setSelected(cell);
    exportPanel?.refresh();
    element('history').hidden = false;
    element('history-hint').textContent = 'The outlined cell; the dashed line is the year on the map.';
    element('hi-cell').textContent = `col ${cell.col}, row ${cell.row}`;
    const h = selectedHistory;
    const iceAtEnd = h.ice_thickness_m[h.ice_thickness_m.length - 1] > 0;
    element('hi-exposed').textContent = iceAtEnd && h.exposure_year != null
      ? `${h.exposure_year}, under ice again by ${timelineInfo.last_year}`
      : h.exposure_year != null ? String(h.exposure_year)
      : (h.covered_at_start ? `still under ice in ${timelineInfo.last_year}` : 'ice-free at the start');
    historyChart.setData(h.years, h.ice_thickness_m);
    historyChart.setMarker(timeBar.year());
    element('hi-stages').textContent = h.stage.length ? firstStageYears(h) : '–';
    coverChart.setData(h.years, h.cover.map((values, t) => ({
      label: timelineInfo.type_names[t], colour: TYPE_COLOURS[t % TYPE_COLOURS.length],
      values: values.map((v) => 100 * v),
    })));
    coverChart.setMarker(timeBar.year());
    showHistoryYear(timeBar.year());
  }

  /** Forgets the run shown: another terrain makes its years, notes and exports stale. */
  function clearRunResult() {
    timelineInfo = null;
    timeBar.reset();
    showRunNotes(null);
    exportPanel?.say('');
    summary = null;
    summaryCsv = null;
    selected = null;
    selectedHistory = null;
    map.setSelected(null);
    element('history').hidden = true;
    element('history-hint').textContent = 'After a run, click a cell on the map to see its history.';
    for (const option of element('layer').options) option.disabled = option.value !== 'terrain';
    element('cover-layers').replaceChildren();
    layer = 'terrain';
    element('layer').value = 'terrain';
    areaChart.setData([], []);
    volumeChart.setData([], []);
    stageChart.setData([], []);
    exportPanel?.refresh();
    zonePanel?.refresh();
  }

  /** The run status between runs: what the next run starts from, or why it cannot run. */
  function runInputsText() {
    if (!info) return 'Open a terrain to run.';
    if (!surface) {
      return `${info.file_name} is a PNG height map: it can be viewed, but runs need the terrain as a GeoTIFF.`;
    }
    if (surface.name === SAMPLE_NAME) {
      return 'Runs use the sample valley with its own ice and vegetation grids.';
    }
    if (!ice) return `Runs use ${surface.name}; open its ice (Ice…: a thickness grid or a glacier outline) first.`;
    return `Runs use ${surface.name} with ${ice.name}.`;
  }

  /** Says which ice and vegetation the next run starts from, with the engine's notes. */
  function showRunInputs() {
    const sample = surface?.name === SAMPLE_NAME;
    element('fi-ice').textContent = ice ? ice.name
      : sample ? 'sample ice grid' : 'none yet: open an ice grid or glacier outline';
    element('fi-vegetation').textContent = vegetation ? vegetation.name
      : sample ? 'sample vegetation grid' : 'potential vegetation on ice-free ground';
    element('fi-domain').textContent = domain ? domain.name
      : 'the starting ice, the ground touching it and the ground draining into them';
    const notes = [...(ice?.notes ?? []), ...(vegetation?.notes ?? []), ...(domain?.notes ?? [])];
    element('fi-input-notes').replaceChildren(...notes.map((text) => {
      const item = document.createElement('li');
      item.textContent = text;
      return item;
    }));
  }

  /** Hands one file's bytes to the engine; on failure the previous terrain stays shown. */
  function loadBytes(bytes, fileName, sidecarText) {
    try {
      info = sidecarText === undefined
        ? workspace.loadTerrain(bytes, fileName)
        : workspace.loadTerrain(bytes, fileName, sidecarText);
    } catch (error) {
      showError(error.message ?? String(error));
      return false;
    }
    clearError();
    clearRunResult();
    // A run needs the surface as GeoTIFF bytes; the sample comes with its own ice grid.
    surface = sidecarText === undefined ? { bytes, name: fileName } : null;
    ice = null;
    vegetation = null;
    domain = null;
    drawMap({ keepView: false, legend: true });
    showInfo(info);
    showRunInputs();
    if (!running) runStatus.textContent = runInputsText();
    showReadout(null);
    mapMessage.textContent = '';
    document.body.dataset.loads = String(Number(document.body.dataset.loads ?? 0) + 1);
    return true;
  }

  /** Asks what a dropped GeoJSON is: the same polygons may be ice, a domain or a zone. */
  function askGeoJsonUse(file) {
    const box = element('drop-choice');
    element('drop-choice-file').textContent = file.name;
    box.hidden = false;
    const buttons = [...box.querySelectorAll('button')];
    buttons[0].focus();
    return new Promise((resolve) => {
      const finish = (use) => {
        box.hidden = true;
        buttons.forEach((button) => { button.onclick = null; });
        box.onkeydown = null;
        resolve(use);
      };
      buttons.forEach((button) => { button.onclick = () => finish(button.dataset.use); });
      box.onkeydown = (event) => { if (event.key === 'Escape') finish(''); };
    });
  }

  async function loadFiles(files) {
    const polygons = files.filter((file) => /\.geojson$/i.test(file.name));
    if (polygons.length > 0) {
      if (polygons.length > 1 || files.length > 1) {
        showError(`${files.map((file) => file.name).join(', ')}: drop one GeoJSON, or the terrain files, at a time.`);
        return;
      }
      const use = await askGeoJsonUse(polygons[0]);
      if (use === 'zone') zonePanel.open(polygons[0]);
      else if (use) await loadRunInput(use, polygons[0]);
      return;
    }
    document.body.dataset.state = 'loading';
    try {
      const { bytes, fileName, sidecarText } = await readTerrainSelection(files);
      loadBytes(bytes, fileName, sidecarText);
    } catch (error) {
      // A file the browser cannot read (removed, no permission) lands here too.
      const message = error instanceof SelectionError
        ? error.message
        : `${files.map((file) => file.name).join(', ')}: could not be read (${error.message}).`;
      showError(message);
    } finally {
      document.body.dataset.state = 'ready';
    }
  }

  async function fetchBytes(url) {
    const response = await fetch(fileUrl(url));
    if (!response.ok) throw new Error(`the server answered ${response.status}`);
    return new Uint8Array(await response.arrayBuffer());
  }

  // --- Scenario form and run -------------------------------------------------------------
  const form = new ScenarioForm(element('scenario-form'), {
    schema: engine.scenarioSchema(),
    defaultsJson: engine.defaultScenarioJson(),
    check: (json) => engine.checkScenario(json),
    onChange: () => {},
    messageHost: element('run-status').parentElement,
  });
  element('scenario-reset').addEventListener('click', () => form.reset());
  element('scenario-save').addEventListener('click', () => form.download());
  element('scenario-open').addEventListener('click', () => element('scenario-input').click());
  element('scenario-input').addEventListener('change', async (event) => {
    const [file] = event.target.files;
    event.target.value = '';
    if (!file) return;
    const problem = await form.load(file);
    if (problem) showError(problem, 'Scenario not loaded');
    else clearError();
  });

  const runStatus = element('run-status');
  const progress = element('run-progress');
  let worker = null;
  let running = false;

  function setRunning(value) {
    running = value;
    element('run').disabled = value;
    element('cancel').disabled = !value;
  }

  function setRunState(state, text) {
    document.body.dataset.run = state;
    runStatus.textContent = text;
  }

  /** The run's start-up (ELA and how it was set, relaxation, glacier domain), under the run
   *  status and, for the ELA, under its field in the form. */
  function showRunNotes(notes) {
    const list = element('run-notes');
    list.replaceChildren(...(notes ?? []).map((note) => {
      const item = document.createElement('li');
      item.textContent = note;
      return item;
    }));
    list.hidden = !notes?.length;
    const ela = notes?.find((note) => note.startsWith('ELA '));
    form.setNote('mass_balance.ela_m', ela ? `Last run: ${ela}.` : null);
  }

  function makeWorker() {
    const created = new Worker(fileUrl('./worker.js'));
    created.onmessage = (event) => onWorkerMessage(event.data);
    created.onerror = (event) => {
      retireWorker();
      setRunning(false);
      setRunState('failed', `The run stopped. ${resultStays()}`);
      showError(`The simulation worker failed: ${event.message ?? 'unknown error'}.`, 'Run failed');
    };
    return created;
  }

  /** After a failure the worker's engine may be out of memory or stopped mid-step: the next
   *  run gets a fresh one, and the page's own terrain, scenario and last run are untouched. */
  function retireWorker() {
    worker?.terminate();
    worker = null;
  }

  const resultStays = () => (timelineInfo ? 'The previous result stays.' : '');

  function onWorkerMessage(message) {
    if (message.type === 'started') {
      progress.max = message.endYear - message.startYear;
      progress.value = 0;
    } else if (message.type === 'progress') {
      const done = message.year - message.startYear;
      progress.value = done;
      setRunState('running', `Year ${message.year} of ${message.endYear} (${done} of ${message.endYear - message.startYear} done)`);
    } else if (message.type === 'done') {
      setRunning(false);
      try {
        timelineInfo = workspace.loadTimeline(new Uint8Array(message.timeline), lastRun.scenarioJson);
      } catch (error) {
        setRunState('failed', 'The run result could not be shown.');
        showError(error.message ?? String(error), 'Run failed');
        return;
      }
      summary = message.summary;
      summaryCsv = message.summaryCsv;
      progress.value = progress.max;
      const mib = timelineInfo.memory_bytes / 2 ** 20;
      setRunState('done', `Done: ${timelineInfo.start_year} to ${timelineInfo.last_year}. Every year is kept in memory (${formatNumber(mib, 1)} MiB), so any year shows at once.`);
      showRunNotes(timelineInfo.run_notes);
      const names = timelineInfo.type_names;
      element('cover-layers').replaceChildren(...names.map((name, index) => {
        const option = document.createElement('option');
        option.value = `cover:${index}`;
        option.textContent = `Cover: ${name}`;
        return option;
      }));
      const plantLayer = (value) => ['stage', 'soil', 'steep_bare'].includes(value) || value.startsWith('cover:');
      for (const option of element('layer').options) option.disabled = names.length === 0 && plantLayer(option.value);
      if (layer === 'terrain' || !element('layer').querySelector(`option[value="${layer}"]:not([disabled])`)) {
        layer = 'ice_thickness';
      }
      element('layer').value = layer;
      const years = summary.map((row) => row.year);
      areaChart.setData(years, summary.map((row) => row.ice_area_km2));
      volumeChart.setData(years, summary.map((row) => row.ice_volume_km3));
      stageClasses = names.length ? workspace.layerLegend('stage').classes : [];
      // Stages 1-6 (ice-free ground), stacked from bare ground up.
      stageChart.setData(years, names.length ? stageClasses.slice(1).map((c, k) => ({
        label: c.label, colour: rgbCss(c.rgb),
        values: summary.map((row) => row.vegetation.stage_area_km2[k + 1]),
      })) : []);
      timeBar.setRange(timelineInfo.start_year, timelineInfo.last_year, timelineInfo.last_year);
      drawMap({ legend: true });
      if (selected) selectCell(selected);
      exportPanel.refresh();
      zonePanel.refresh();
    } else if (message.type === 'cancelled') {
      setRunning(false);
      setRunState('cancelled', `Cancelled at ${message.year}. ${resultStays()}`);
    } else if (message.type === 'failed') {
      retireWorker();
      setRunning(false);
      setRunState('failed', `The run failed; see the message. ${resultStays()}`);
      const names = lastRun ? ` (${lastRun.surface.name}, ${lastRun.ice.name})` : '';
      showError(`${message.message}${names}`, 'Run failed');
    }
  }

  async function startRun() {
    if (running) return;
    const scenarioJson = form.validJson();
    if (!scenarioJson) {
      setRunState('invalid', 'Not run: fix the flagged values first.');
      return;
    }
    if (!surface) {
      setRunState('invalid', 'Not run: runs need the terrain as a GeoTIFF.');
      return;
    }
    clearError();
    setRunning(true);
    setRunState('running', 'Starting…');
    try {
      if (!ice && surface.name === SAMPLE_NAME) {
        ice = { bytes: await fetchBytes(SAMPLE_ICE_URL), name: 'valley_ice_thickness.tif' };
      }
      if (!vegetation && surface.name === SAMPLE_NAME) {
        vegetation = { bytes: await fetchBytes(SAMPLE_VEGETATION_URL), name: 'valley_vegetation.tif' };
      }
      showRunInputs();
    } catch (error) {
      setRunning(false);
      setRunState('failed', 'The sample ice grid could not be fetched.');
      showError(`The sample ice or vegetation grid could not be fetched: ${error.message}.`, 'Run failed');
      return;
    }
    if (!ice) {
      setRunning(false);
      setRunState('invalid', 'Not run: open an ice-thickness grid that matches the terrain.');
      return;
    }
    lastRun = { scenarioJson, surface, ice, vegetation };
    worker ??= makeWorker();
    worker.postMessage({
      type: 'run', wasm: await workerWasm(), scenarioJson, surfaceBytes: surface.bytes, surfaceName: surface.name,
      iceBytes: ice.bytes, iceName: ice.name,
      vegetationBytes: vegetation?.bytes ?? null, vegetationName: vegetation?.name ?? null,
      domainBytes: domain?.bytes ?? null, domainName: domain?.name ?? null,
    });
  }

  element('run').addEventListener('click', startRun);
  element('cancel').addEventListener('click', () => {
    if (!running) return;
    setRunState('running', 'Cancelling…');
    worker.postMessage({ type: 'cancel' });
  });
  /** Reads a picked file; the engine checks it against the terrain at once, so a bad file is
   *  refused with its name and the ice or vegetation chosen before stays. */
  async function loadRunInput(kind, file) {
    let bytes;
    try {
      bytes = new Uint8Array(await file.arrayBuffer());
    } catch (error) {
      showError(`${file.name}: could not be read (${error.message}).`);
      return;
    }
    if (!workspace.hasTerrain()) {
      showError(`${file.name}: open the terrain first; the ${kind === 'domain' ? 'glacier domain' : kind} is checked against it.`);
      return;
    }
    let notes;
    try {
      notes = {
        ice: () => workspace.checkIce(bytes, file.name, form.validJson() ?? undefined),
        vegetation: () => workspace.checkVegetation(bytes, file.name),
        domain: () => workspace.checkDomain(bytes, file.name),
      }[kind]();
    } catch (error) {
      showError(error.message ?? String(error));
      return;
    }
    clearError();
    if (kind === 'ice') ice = { bytes, name: file.name, notes };
    else if (kind === 'vegetation') vegetation = { bytes, name: file.name, notes };
    else domain = { bytes, name: file.name, notes };
    showRunInputs();
    const what = {
      ice: /\.(geo)?json$/i.test(file.name) ? 'Glacier outline' : 'Ice grid',
      vegetation: 'Vegetation',
      domain: 'Glacier domain',
    }[kind];
    setRunState('ready', `${what}: ${file.name}. It is used from the next run.`);
    document.body.dataset.inputs = String(Number(document.body.dataset.inputs ?? 0) + 1);
  }

  const pickOne = (buttonId, inputId, kind) => {
    element(buttonId).addEventListener('click', () => element(inputId).click());
    element(inputId).addEventListener('change', (event) => {
      const [file] = event.target.files;
      event.target.value = '';
      if (file) loadRunInput(kind, file);
    });
  };
  pickOne('open-ice', 'ice-input', 'ice');
  pickOne('open-vegetation', 'vegetation-input', 'vegetation');
  pickOne('open-domain', 'domain-input', 'domain');

  element('layer').addEventListener('change', (event) => {
    layer = event.target.value;
    drawMap({ legend: true });
    exportPanel.refresh();
  });

  attachLoaders({
    button: element('open-terrain'),
    input: element('terrain-input'),
    dropTarget: element('map-frame'),
    onFiles: loadFiles,
  });
  element('zoom-in').addEventListener('click', () => map.zoomIn());
  element('zoom-out').addEventListener('click', () => map.zoomOut());
  element('zoom-fit').addEventListener('click', () => map.fit());
  element('error-dismiss').addEventListener('click', clearError);

  exportPanel = new ExportPanel({
    workspace,
    elements: {
      png: element('export-png'), tif: element('export-tif'), cells: element('export-cells'),
      summary: element('export-summary'), history: element('export-history'),
      stages: element('export-stages'), ice: element('export-ice'), iceYears: element('export-ice-years'),
      progress: element('export-progress'), status: element('export-status'), hint: element('export-hint'),
    },
    current: () => (timelineInfo ? {
      layer,
      layerLabel: element('layer').selectedOptions[0]?.textContent ?? layer,
      year: timeBar.year(),
      cell: selected,
      first: timelineInfo.start_year,
      last: timelineInfo.last_year,
      hasPlants: timelineInfo.type_names.length > 0,
      geojsonCoordinates: info?.geojson_coordinates ?? null,
    } : null),
    summaryCsv: () => summaryCsv,
  });

  zonePanel = new ZonePanel({
    workspace, map, year: currentYear, showError, clearError,
    terrain: () => info,
    elements: {
      open: element('zone-open'), input: element('zone-input'), csv: element('zone-csv'),
      save: element('zone-save'), draw: element('zone-draw'), finish: element('zone-finish'),
      cancel: element('zone-cancel'), map: element('map'),
      summary: element('zone-summary'), hint: element('zone-hint'), keys: element('zone-keys'),
      tableBox: element('zone-table-box'), head: element('zone-table-head'), body: element('zone-table-body'),
    },
  });

  // Hooks for the browser tests and for checking a value by hand in the console.
  window.forefield = {
    readoutAt: (col, row) => workspace.readout(col, row),
    info: () => info,
    legend: () => (!workspace.hasTerrain() ? null
      : layer === 'terrain' ? workspace.legend() : workspace.layerLegend(layer)),
    cellCentreOnPage: (col, row) => map.cellCentreOnPage(col, row),
    state: () => ({ run: document.body.dataset.run ?? 'none', layer, year: currentYear(), timeline: timelineInfo,
      summaryYears: summary?.length ?? 0 }),
    cellHistory: (col, row) => workspace.cellHistory(col, row),
    zoneTimeline: () => (workspace.hasZone() && workspace.hasTimeline() ? workspace.zoneTimeline() : null),
    chartMarkerX: () => areaChart.markerX(),
    stageChartMarkerX: () => stageChart.markerX(),
    summary: () => summary,
    lastScenarioJson: () => lastRun?.scenarioJson ?? null,
    /** The last run's scenario stepped here through the engine's own IceRun (not the worker,
     *  not the timeline): thickness and exposure year of one cell for every year. */
    engineCellSeries: (col, row) => {
      const run = new engine.IceRun(lastRun.scenarioJson, lastRun.surface.bytes, lastRun.surface.name,
        lastRun.ice.bytes, lastRun.ice.name);
      try {
        const idx = row * info.n_cols + col;
        const years = [run.year()];
        const thickness = [new Float32Array(wasm.memory.buffer, run.iceThicknessPtr(), run.nCells())[idx]];
        while (run.stepYears(1) > 0) {
          years.push(run.year());
          thickness.push(new Float32Array(wasm.memory.buffer, run.iceThicknessPtr(), run.nCells())[idx]);
        }
        const exposed = new Int32Array(wasm.memory.buffer, run.exposureYearPtr(), run.nCells())[idx];
        return { years, ice_thickness_m: thickness, exposure_year: exposed };
      } finally {
        run.free();
      }
    },
  };

  /** The last run's scenario stepped here through the engine's own CoupledRun (not the
   *  worker, not the timeline): stage, cover of each type and soil of one cell every year. */
  window.forefield.engineCoupledSeries = (col, row) => {
    const { scenarioJson, surface: s, ice: i, vegetation: v } = lastRun;
    const run = new engine.CoupledRun(scenarioJson, s.bytes, s.name, i.bytes, i.name, v.bytes, v.name);
    try {
      const idx = row * info.n_cols + col;
      const n = run.nCells();
      const years = [];
      const stage = [];
      const cover = Array.from({ length: run.nTypes() }, () => []);
      const soil = [];
      const sample = () => {
        years.push(run.year());
        stage.push(new Uint8Array(wasm.memory.buffer, run.stagePtr(), n)[idx]);
        cover.forEach((series, t) => series.push(new Float32Array(wasm.memory.buffer, run.coverPtr(t), n)[idx]));
        soil.push(new Float32Array(wasm.memory.buffer, run.soilPtr(), n)[idx]);
      };
      sample();
      while (run.stepYears(1) > 0) sample();
      return { years, stage, cover, soil, summary: run.summary() };
    } finally {
      run.free();
    }
  };

  mapMessage.textContent = 'Loading the sample valley…';
  try {
    loadBytes(await fetchBytes(SAMPLE_URL), SAMPLE_NAME);
  } catch (error) {
    showError(`The sample valley_dem.tif could not be fetched: ${error.message}.`);
  }
  if (!workspace.hasTerrain()) {
    mapMessage.textContent = 'No terrain yet. Use Open “Terrain…” or drop a GeoTIFF here.';
  }
  document.body.dataset.state = 'ready';
  keepForOffline();
}

boot();
