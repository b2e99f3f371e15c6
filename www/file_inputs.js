// The files the planner opens or drops: the terrain (picked or dropped, through loaders.js),
// shown in the File panel; the ice, vegetation and glacier-domain pickers, each file checked
// by the engine against the terrain at once; and the question what a dropped GeoJSON is.

import { attachLoaders, readTerrainSelection, SelectionError } from './loaders.js';
import { clearError, element, formatNumber, showError, showList } from './page_text.js';

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
  showList(element('fi-notes'), info.notes ?? []);
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

export class FileInputs {
  /**
   * @param {{workspace: object, inputs: object, form: object, run: object, zones: object,
   *   onTerrain: () => void}} options `onTerrain` redraws the page for a new terrain.
   */
  constructor({ workspace, inputs, form, run, zones, onTerrain }) {
    Object.assign(this, { workspace, inputs, form, run, zones, onTerrain });
    const pickOne = (buttonId, inputId, kind) => {
      element(buttonId).addEventListener('click', () => element(inputId).click());
      element(inputId).addEventListener('change', (event) => {
        const [file] = event.target.files;
        event.target.value = '';
        if (file) this.loadRunInput(kind, file);
      });
    };
    pickOne('open-ice', 'ice-input', 'ice');
    pickOne('open-vegetation', 'vegetation-input', 'vegetation');
    pickOne('open-domain', 'domain-input', 'domain');
    attachLoaders({
      button: element('open-terrain'),
      input: element('terrain-input'),
      dropTarget: element('map-frame'),
      onFiles: (files) => this.loadFiles(files),
    });
  }

  /** Hands one file's bytes to the engine; on failure the previous terrain stays shown. */
  loadBytes(bytes, fileName, sidecarText) {
    let info;
    try {
      info = sidecarText === undefined
        ? this.workspace.loadTerrain(bytes, fileName)
        : this.workspace.loadTerrain(bytes, fileName, sidecarText);
    } catch (error) {
      showError(error.message ?? String(error));
      return false;
    }
    clearError();
    // A run needs the surface as GeoTIFF bytes; the sample comes with its own ice grid.
    this.inputs.setTerrain(info, sidecarText === undefined ? { bytes, name: fileName } : null);
    this.onTerrain();
    showInfo(info);
    this.inputs.show();
    this.run.showInputs();
    element('map-message').textContent = '';
    document.body.dataset.loads = String(Number(document.body.dataset.loads ?? 0) + 1);
    return true;
  }

  async loadFiles(files) {
    const polygons = files.filter((file) => /\.geojson$/i.test(file.name));
    if (polygons.length > 0) {
      if (polygons.length > 1 || files.length > 1) {
        showError(`${files.map((file) => file.name).join(', ')}: drop one GeoJSON, or the terrain files, at a time.`);
        return;
      }
      const use = await askGeoJsonUse(polygons[0]);
      if (use === 'zone') this.zones.open(polygons[0]);
      else if (use) await this.loadRunInput(use, polygons[0]);
      return;
    }
    document.body.dataset.state = 'loading';
    try {
      const { bytes, fileName, sidecarText } = await readTerrainSelection(files);
      this.loadBytes(bytes, fileName, sidecarText);
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

  /** Reads a picked file; the engine checks it against the terrain at once, so a bad file is
   *  refused with its name and the ice or vegetation chosen before stays. */
  async loadRunInput(kind, file) {
    const { workspace } = this;
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
        ice: () => workspace.checkIce(bytes, file.name, this.form.validJson() ?? undefined),
        vegetation: () => workspace.checkVegetation(bytes, file.name),
        domain: () => workspace.checkDomain(bytes, file.name),
      }[kind]();
    } catch (error) {
      showError(error.message ?? String(error));
      return;
    }
    clearError();
    this.inputs.use(kind, { bytes, name: file.name, notes });
    this.inputs.show();
    const what = {
      ice: /\.(geo)?json$/i.test(file.name) ? 'Glacier outline' : 'Ice grid',
      vegetation: 'Vegetation',
      domain: 'Glacier domain',
    }[kind];
    this.run.setState('ready', `${what}: ${file.name}. It is used from the next run.`);
    document.body.dataset.inputs = String(Number(document.body.dataset.inputs ?? 0) + 1);
  }
}
