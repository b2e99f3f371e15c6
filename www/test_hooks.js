// Hooks for the browser tests and for checking a value by hand in the console
// (`window.forefield`): the page's state as the tests read it, and the last run stepped again
// through the engine's own IceRun and CoupledRun, apart from the worker and the timeline, so a
// test can hold the recorded timeline against them.

/** One cell of the last run for every year, through IceRun: thickness and exposure year. */
function engineCellSeries({ engine, memory, run, inputs }, col, row) {
  const { lastRun } = run;
  const ice = new engine.IceRun(lastRun.scenarioJson, lastRun.surface.bytes, lastRun.surface.name,
    lastRun.ice.bytes, lastRun.ice.name);
  try {
    const idx = row * inputs.terrain.n_cols + col;
    const years = [ice.year()];
    const thickness = [new Float32Array(memory.buffer, ice.iceThicknessPtr(), ice.nCells())[idx]];
    while (ice.stepYears(1) > 0) {
      years.push(ice.year());
      thickness.push(new Float32Array(memory.buffer, ice.iceThicknessPtr(), ice.nCells())[idx]);
    }
    const exposed = new Int32Array(memory.buffer, ice.exposureYearPtr(), ice.nCells())[idx];
    return { years, ice_thickness_m: thickness, exposure_year: exposed };
  } finally {
    ice.free();
  }
}

/** One cell of the last run for every year, through CoupledRun: stage, cover of each type
 *  and soil. */
function engineCoupledSeries({ engine, memory, run, inputs }, col, row) {
  const { scenarioJson, surface: s, ice: i, vegetation: v } = run.lastRun;
  const coupled = new engine.CoupledRun(scenarioJson, s.bytes, s.name, i.bytes, i.name, v.bytes, v.name);
  try {
    const idx = row * inputs.terrain.n_cols + col;
    const n = coupled.nCells();
    const years = [];
    const stage = [];
    const cover = Array.from({ length: coupled.nTypes() }, () => []);
    const soil = [];
    const sample = () => {
      years.push(coupled.year());
      stage.push(new Uint8Array(memory.buffer, coupled.stagePtr(), n)[idx]);
      cover.forEach((series, t) => series.push(new Float32Array(memory.buffer, coupled.coverPtr(t), n)[idx]));
      soil.push(new Float32Array(memory.buffer, coupled.soilPtr(), n)[idx]);
    };
    sample();
    while (coupled.stepYears(1) > 0) sample();
    return { years, stage, cover, soil, summary: coupled.summary() };
  } finally {
    coupled.free();
  }
}

/**
 * @param {{engine: object, memory: WebAssembly.Memory, workspace: object, map: object,
 *   inputs: object, layers: object, run: object, charts: object}} page
 */
export function installTestHooks(page) {
  const { workspace, map, inputs, layers, run, charts } = page;
  window.forefield = {
    readoutAt: (col, row) => workspace.readout(col, row),
    info: () => inputs.terrain,
    legend: () => layers.legend(),
    cellCentreOnPage: (col, row) => map.cellCentreOnPage(col, row),
    state: () => ({ run: document.body.dataset.run ?? 'none', layer: layers.layer, year: layers.currentYear(),
      timeline: run.timeline, summaryYears: run.summary?.length ?? 0 }),
    cellHistory: (col, row) => workspace.cellHistory(col, row),
    zoneTimeline: () => (workspace.hasZone() && workspace.hasTimeline() ? workspace.zoneTimeline() : null),
    chartMarkerX: () => charts.area.markerX(),
    stageChartMarkerX: () => charts.stages.markerX(),
    summary: () => run.summary,
    lastScenarioJson: () => run.lastRun?.scenarioJson ?? null,
    engineCellSeries: (col, row) => engineCellSeries(page, col, row),
    engineCoupledSeries: (col, row) => engineCoupledSeries(page, col, row),
  };
}
