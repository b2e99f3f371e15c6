// Page boot: starts the engine, builds the page's parts around one engine workspace, wires
// them together and loads the bundled sample. This thread only renders: runs happen in
// worker.js (see run_controller.js), which hands back the recorded timeline as one
// transferred buffer.

import { MapView } from './map.js';
import { ScenarioForm } from './scenario_form.js';
import { TimeBar } from './timebar.js';
import { ExportPanel } from './exports.js';
import { ZonePanel } from './zones.js';
import { ENGINE_WASM, fetchBytes, fileUrl, keepForOffline } from './files.js';
import { clearError, element, showError } from './page_text.js';
import { CellReadout } from './cell_readout.js';
import { CellHistory } from './cell_history.js';
import { SummaryCharts } from './summary_charts.js';
import { MapLayers } from './map_layers.js';
import { RunInputs, SAMPLE_NAME, SAMPLE_URL } from './run_inputs.js';
import { RunController } from './run_controller.js';
import { FileInputs } from './file_inputs.js';
import { installTestHooks } from './test_hooks.js';

/** The engine and its workspace, or null (said on the page) where it cannot start. */
async function startEngine() {
  try {
    // Imported here rather than at the top so a missing or broken engine build still
    // leaves a page that says what went wrong.
    const engine = await import('./pkg/forefield_wasm.js');
    const wasm = await engine.default({ module_or_path: fileUrl(ENGINE_WASM) });
    return { engine, wasm, workspace: new engine.Workspace() };
  } catch (error) {
    document.body.dataset.state = 'failed';
    element('map-message').textContent = 'The map engine could not start in this browser.';
    showError(`The map engine could not start: ${error.message ?? error}`);
    return null;
  }
}

function scenarioForm(engine) {
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
  return form;
}

/** The Export panel over what the map shows: layer, year, chosen cell. */
function exportPanelOf({ workspace, inputs, run, layers, history, timeBar }) {
  return new ExportPanel({
    workspace,
    elements: {
      png: element('export-png'), tif: element('export-tif'), cells: element('export-cells'),
      summary: element('export-summary'), history: element('export-history'),
      stages: element('export-stages'), ice: element('export-ice'), iceYears: element('export-ice-years'),
      progress: element('export-progress'), status: element('export-status'), hint: element('export-hint'),
    },
    current: () => (run.timeline ? {
      layer: layers.layer,
      layerLabel: layers.label(),
      year: timeBar.year(),
      cell: history.cell,
      first: run.timeline.start_year,
      last: run.timeline.last_year,
      hasPlants: run.timeline.type_names.length > 0,
      geojsonCoordinates: inputs.terrain?.geojson_coordinates ?? null,
    } : null),
    summaryCsv: () => run.summaryCsv,
  });
}

function zonePanelOf({ workspace, map, inputs, year }) {
  return new ZonePanel({
    workspace, map, year, showError, clearError,
    terrain: () => inputs.terrain,
    elements: {
      open: element('zone-open'), input: element('zone-input'), csv: element('zone-csv'),
      save: element('zone-save'), draw: element('zone-draw'), finish: element('zone-finish'),
      cancel: element('zone-cancel'), map: element('map'),
      summary: element('zone-summary'), hint: element('zone-hint'), keys: element('zone-keys'),
      tableBox: element('zone-table-box'), head: element('zone-table-head'), body: element('zone-table-body'),
    },
  });
}

async function boot() {
  const started = await startEngine();
  if (!started) return;
  const { engine, wasm, workspace } = started;
  let exportPanel = null;
  let zonePanel = null;

  const inputs = new RunInputs();
  const form = scenarioForm(engine);
  const run = new RunController({ workspace, form, inputs, onResult: () => showRunResult() });
  const year = () => layers.currentYear();
  const readout = new CellReadout(workspace, year);
  const map = new MapView(element('map'), (cell) => readout.point(cell),
    (cell) => (zonePanel?.drawing ? zonePanel.addCorner(cell) : history.select(cell)));
  const timeBar = new TimeBar({
    slider: element('year-slider'), back: element('year-back'), forward: element('year-forward'),
    play: element('play'), label: element('year-label'),
  }, (chosen) => showYear(chosen));
  const layers = new MapLayers({
    workspace, memory: wasm.memory, map,
    terrain: () => inputs.terrain, timeline: () => run.timeline, year: () => timeBar.year(),
    onChange: () => exportPanel.refresh(),
  });
  const charts = new SummaryCharts();
  const history = new CellHistory({
    workspace, map, timeline: () => run.timeline, year: () => timeBar.year(),
    onSelect: () => exportPanel?.refresh(),
  });

  function showYear(chosen) {
    if (!run.timeline) return;
    layers.draw();
    charts.setMarker(chosen);
    history.showYear(chosen);
    exportPanel?.refresh();
    zonePanel?.setYear();
    readout.showYear(chosen);
  }

  function showRunResult() {
    const { timeline } = run;
    const names = timeline.type_names;
    layers.offerRunLayers(names);
    const stages = names.length ? workspace.layerLegend('stage').classes : [];
    history.setStages(stages);
    charts.show(run.summary, stages);
    timeBar.setRange(timeline.start_year, timeline.last_year, timeline.last_year);
    layers.draw({ legend: true });
    history.reselect();
    exportPanel.refresh();
    zonePanel.refresh();
  }

  /** Forgets the run shown: another terrain makes its years, notes and exports stale. */
  function clearRunResult() {
    run.forget();
    timeBar.reset();
    exportPanel?.say('');
    history.clear();
    layers.reset();
    charts.clear();
    exportPanel?.refresh();
    zonePanel?.refresh();
  }

  element('zoom-in').addEventListener('click', () => map.zoomIn());
  element('zoom-out').addEventListener('click', () => map.zoomOut());
  element('zoom-fit').addEventListener('click', () => map.fit());
  element('error-dismiss').addEventListener('click', clearError);

  exportPanel = exportPanelOf({ workspace, inputs, run, layers, history, timeBar });
  zonePanel = zonePanelOf({ workspace, map, inputs, year });

  const files = new FileInputs({
    workspace, inputs, form, run, zones: zonePanel,
    onTerrain: () => {
      clearRunResult();
      layers.draw({ keepView: false, legend: true });
      readout.clear();
    },
  });

  installTestHooks({ engine, memory: wasm.memory, workspace, map, inputs, layers, run, charts });

  const mapMessage = element('map-message');
  mapMessage.textContent = 'Loading the sample valley…';
  try {
    files.loadBytes(await fetchBytes(SAMPLE_URL), SAMPLE_NAME);
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
