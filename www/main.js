// Page boot and wiring: starts the engine, loads the bundled sample, and connects the map,
// the loaders, the legend, the readout and the error area.

import { MapView } from './map.js';
import { attachLoaders, readTerrainSelection, SelectionError } from './loaders.js';
import { renderLegend } from './legend.js';

const SAMPLE_URL = './sample-grids/valley_dem.tif';

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

function showError(message) {
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

const READOUT_FIELDS = ['easting', 'northing', 'elevation', 'slope', 'aspect', 'cell'];

function showReadout(cell) {
  const set = (name, text) => { element(`ro-${name}`).textContent = text; };
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
  element('readout-hint').textContent = 'At the cell centre; slope and aspect by Horn (1981).';
}

async function boot() {
  const mapMessage = element('map-message');
  let wasm;
  let workspace;
  try {
    // Imported here rather than at the top so a missing or broken engine build still
    // leaves a page that says what went wrong.
    const { default: init, Workspace } = await import('./pkg/forefield_wasm.js');
    wasm = await init();
    workspace = new Workspace();
  } catch (error) {
    document.body.dataset.state = 'failed';
    mapMessage.textContent = 'The map engine could not start in this browser.';
    showError(`The map engine could not start: ${error.message ?? error}`);
    return;
  }

  let info = null;
  const map = new MapView(element('map'), (cell) => {
    showReadout(cell && workspace.hasTerrain() ? workspace.readout(cell.col, cell.row) : null);
  });

  // One render per loaded terrain: the engine fills its RGBA buffer, and the view over wasm
  // memory is made afresh because loading may have grown (and so moved) that memory.
  function drawTerrain() {
    workspace.renderTerrain();
    const pixels = new Uint8ClampedArray(
      wasm.memory.buffer, workspace.imagePtr(), workspace.imageLen(),
    );
    const image = new ImageData(pixels, workspace.imageWidth(), workspace.imageHeight());
    map.setImage(image, info.cell_size_m);
    renderLegend(element('legend'), workspace.legend(), (value) => formatNumber(value));
    showInfo(info);
    showReadout(null);
    mapMessage.textContent = '';
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
    drawTerrain();
    document.body.dataset.loads = String(Number(document.body.dataset.loads ?? 0) + 1);
    return true;
  }

  async function loadFiles(files) {
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

  // Hooks for the browser tests and for checking a value by hand in the console.
  window.forefield = {
    readoutAt: (col, row) => workspace.readout(col, row),
    info: () => info,
    legend: () => (workspace.hasTerrain() ? workspace.legend() : null),
    cellCentreOnPage: (col, row) => map.cellCentreOnPage(col, row),
  };

  mapMessage.textContent = 'Loading the sample valley…';
  try {
    const response = await fetch(SAMPLE_URL);
    if (!response.ok) throw new Error(`the server answered ${response.status}`);
    const bytes = new Uint8Array(await response.arrayBuffer());
    loadBytes(bytes, 'valley_dem.tif');
  } catch (error) {
    showError(`The sample valley_dem.tif could not be fetched: ${error.message}.`);
  }
  if (!workspace.hasTerrain()) {
    mapMessage.textContent = 'No terrain yet. Use “Open terrain…” or drop a GeoTIFF here.';
  }
  document.body.dataset.state = 'ready';
}

boot();
