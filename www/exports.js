// The export panel: downloads of the engine's exports for the layer and year on the map.
// The engine makes every file (the same bytes as the command line's); this module only names
// them, hands them to the browser as downloads, and streams the large cells table in chunks
// with a pause between them so the page keeps answering.

const CHUNK_ROWS = 16384;

/** Offers `parts` (strings or byte arrays) to the browser as a file download. */
export function download(parts, fileName, type) {
  const url = URL.createObjectURL(new Blob(parts, { type }));
  const link = document.createElement('a');
  link.href = url;
  link.download = fileName;
  document.body.append(link);
  link.click();
  link.remove();
  // The download has its own reference to the blob; revoking later frees it once done.
  setTimeout(() => URL.revokeObjectURL(url), 60000);
}

const nextTask = () => new Promise((resolve) => { setTimeout(resolve, 0); });

/** Years typed as "2030, 2050 2100"; empty means none. Throws a message for anything else. */
export function parseYears(text, first, last) {
  const words = text.split(/[\s,;]+/).filter(Boolean);
  return words.map((word) => {
    if (!/^\d{1,4}$/.test(word)) throw new Error(`“${word}” is not a year`);
    const year = Number(word);
    if (year < first || year > last) throw new Error(`${year} is outside the run (${first} to ${last})`);
    return year;
  });
}

export class ExportPanel {
  /**
   * @param {{workspace: object, elements: Record<string, HTMLElement>,
   *   current: () => ({layer: string, year: number, cell: {col: number, row: number} | null,
   *     first: number, last: number, hasPlants: boolean} | null),
   *   summaryCsv: () => string | null}} options
   */
  constructor({ workspace, elements, current, summaryCsv }) {
    this.workspace = workspace;
    this.el = elements;
    this.current = current;
    this.summaryCsv = summaryCsv;
    this.busy = false;
    const on = (name, action) => this.el[name].addEventListener('click', () => this.run(action));
    on('png', (s) => this.snapshot(s));
    on('tif', (s) => this.geotiff(s));
    on('cells', (s) => this.cells(s));
    on('summary', () => this.summary());
    on('history', (s) => this.history(s));
    on('ice', (s) => this.iceOutlines(s));
    on('stages', (s) => this.stages(s));
    this.refresh();
  }

  /** Enables what the loaded run allows; called after runs, layer changes and cell picks. */
  refresh() {
    const state = this.current();
    const layerOnMap = state && state.layer !== 'terrain';
    this.el.png.disabled = this.busy || !layerOnMap;
    this.el.tif.disabled = this.busy || !layerOnMap;
    this.el.cells.disabled = this.busy || !state;
    this.el.summary.disabled = this.busy || !state || !this.summaryCsv();
    this.el.history.disabled = this.busy || !state?.cell;
    this.el.ice.disabled = this.busy || !state;
    this.el.stages.disabled = this.busy || !state?.hasPlants;
    this.el.iceYears.disabled = this.busy || !state;
    // Positions are converted to WGS 84 only from a UTM terrain; the engine says which.
    const where = state?.geojsonCoordinates;
    this.el.stages.title = where ? `Polygons of each succession stage; ${where}` : 'Polygons of each succession stage';
    this.el.ice.title = where ? `Ice outline of each year asked; ${where}` : 'Ice outline of each year asked';
    this.el.hint.textContent = !state ? 'After a run: exports of the layer and year on the map.'
      : layerOnMap ? `Map exports: ${state.layerLabel} in ${state.year}.`
        : `Choose a run layer for the map exports; tables use ${state.year}.`;
  }

  async run(action) {
    const state = this.current();
    if (this.busy || !state) return;
    this.busy = true;
    this.refresh();
    this.say('');
    try {
      await action(state);
    } catch (error) {
      this.say(`Not exported: ${error.message ?? error}`, true);
    } finally {
      this.busy = false;
      this.el.progress.hidden = true;
      this.refresh();
    }
  }

  say(text, isError = false) {
    this.el.status.textContent = text;
    this.el.status.classList.toggle('error', isError);
  }

  done(fileName, bytes) {
    const size = bytes >= 1e6 ? `${(bytes / 1e6).toFixed(1)} MB` : `${Math.max(1, Math.round(bytes / 1e3))} kB`;
    this.say(`Saved ${fileName} (${size}).`);
    document.body.dataset.exports = String(Number(document.body.dataset.exports ?? 0) + 1);
  }

  stem(state) {
    return this.workspace.layerFileStem(state.layer);
  }

  snapshot(state) {
    const png = this.workspace.exportSnapshot(state.layer, state.year);
    const name = `snapshot_${this.stem(state)}_${state.year}.png`;
    download([png], name, 'image/png');
    this.done(name, png.length);
  }

  geotiff(state) {
    const tif = this.workspace.exportLayerGeotiff(state.layer, state.year);
    const name = `layer_${this.stem(state)}_${state.year}.tif`;
    download([tif], name, 'image/tiff');
    this.done(name, tif.length);
  }

  summary() {
    const text = this.summaryCsv();
    download([text], 'summary.csv', 'text/csv');
    this.done('summary.csv', text.length);
  }

  history(state) {
    const { col, row } = state.cell;
    const text = this.workspace.exportCellHistory(col, row);
    const name = `cell_${col}_${row}_history.csv`;
    download([text], name, 'text/csv');
    this.done(name, text.length);
  }

  iceOutlines(state) {
    const years = parseYears(this.el.iceYears.value, state.first, state.last);
    const chosen = years.length ? years : [state.year];
    const text = this.workspace.exportIceOutlines(Int32Array.from(chosen));
    // The command line's name, whatever the years: each feature says its year.
    const name = 'ice_outlines.geojson';
    download([text], name, 'application/geo+json');
    this.done(name, text.length);
  }

  stages(state) {
    const text = this.workspace.exportStagePolygons(state.year);
    const name = `stages_${state.year}.geojson`;
    download([text], name, 'application/geo+json');
    this.done(name, text.length);
  }

  /** The cells table in chunks: each chunk is a copy out of wasm memory, kept by the Blob. */
  async cells(state) {
    const total = this.workspace.startCellsCsv(state.year);
    const { progress } = this.el;
    progress.max = Math.max(1, total);
    progress.value = 0;
    progress.hidden = false;
    const parts = [];
    let rows = 0;
    let bytes = 0;
    for (;;) {
      const chunk = this.workspace.nextCellsCsvChunk(CHUNK_ROWS);
      if (chunk === undefined) break;
      parts.push(chunk);
      bytes += chunk.length;
      rows = Math.min(total, rows + CHUNK_ROWS);
      progress.value = rows;
      this.say(`Writing cells of ${state.year}: ${rows.toLocaleString('en-GB')} of ${total.toLocaleString('en-GB')} rows…`);
      await nextTask();
    }
    const name = `cells_${state.year}.csv`;
    download(parts, name, 'text/csv');
    this.done(name, bytes);
  }
}
