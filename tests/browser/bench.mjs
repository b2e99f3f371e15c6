// The wasm side of `./build.sh bench`: the same 200-year ice run and coupled ice and
// vegetation run as `forefield bench`, inside headless Debian Chromium, printed as JSON
// lines, plus the slider scrub and the Export panel's exports on the large valley; with
// NATIVE_BENCH (the native JSON lines) set, also the wasm/native ratios. Medians over repeats, since shared machines are noisy.

import { chromium } from 'playwright-core';

const URL_BASE = process.env.FOREFIELD_URL ?? 'http://127.0.0.1:8765/';
// Kept in step with BENCH_SCENARIO_JSON in crate/cli/src/bench.rs.
const SCENARIO_JSON = '{"version": 1, "name": "benchmark", "n_years": 200}';
const REPEATS = 3;
const nativeLines = (process.env.NATIVE_BENCH ?? '').split('\n').filter((l) => l.trim()).map((l) => JSON.parse(l));
const nativeOf = (bench) => nativeLines.find((l) => l.bench === bench);

const browser = await chromium.launch({
  executablePath: '/usr/bin/chromium',
  args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking',
    '--disable-component-update', '--no-first-run'],
});
try {
  const page = await browser.newPage();
  await page.goto(new URL('pkg/forefield_wasm.js', URL_BASE).href);
  const result = await page.evaluate(async ({ scenario, repeats }) => {
    const wasm = await import('/pkg/forefield_wasm.js');
    await wasm.default();
    const fetchBytes = async (name) => new Uint8Array(await (await fetch(`/bench-grids/${name}`)).arrayBuffer());
    const surface = await fetchBytes('valley_dem.tif');
    const ice = await fetchBytes('valley_ice_thickness.tif');
    const seconds = [];
    let summary = null;
    for (let i = 0; i < repeats; i += 1) {
      // Only the yearly steps are timed, as natively; setup here also decodes the GeoTIFFs.
      const run = new wasm.IceRun(scenario, surface, 'valley_dem.tif', ice, 'valley_ice_thickness.tif');
      const started = performance.now();
      while (run.stepYears(10) > 0) { /* all years */ }
      seconds.push((performance.now() - started) / 1000);
      summary = run.summary();
      run.free();
    }
    return { seconds, summary };
  }, { scenario: SCENARIO_JSON, repeats: REPEATS });

  const seconds = [...result.seconds].sort((a, b) => a - b);
  const median = seconds[Math.floor(REPEATS / 2)];
  const years = result.summary.length - 1;
  const updates = result.summary.reduce((sum, row) => sum + row.cell_updates, 0);
  const line = {
    bench: 'ice_run',
    side: 'wasm',
    years,
    repeats: REPEATS,
    seconds_median: Number(median.toFixed(4)),
    seconds_min: Number(seconds[0].toFixed(4)),
    seconds_max: Number(seconds[REPEATS - 1].toFixed(4)),
    seconds_per_year: Number((median / years).toFixed(6)),
    ice_cell_updates_per_second: Math.round(updates / median),
    ice_area_km2_start: Number(result.summary[0].ice_area_km2.toFixed(3)),
    ice_area_km2_end: Number(result.summary[years].ice_area_km2.toFixed(3)),
  };
  console.log(JSON.stringify(line));
  const native = nativeOf('ice_run');
  if (native) {
    console.log(JSON.stringify({
      bench: 'ice_run',
      side: 'ratio',
      wasm_over_native: Number((median / native.seconds_median).toFixed(3)),
      same_end_area: Math.abs(native.ice_area_km2_end - line.ice_area_km2_end) < 1e-3,
    }));
  }
  // The coupled run: ice and the five default plant types from the sample's stage grid.
  const coupled = await page.evaluate(async ({ scenario, repeats }) => {
    const wasm = await import('/pkg/forefield_wasm.js');
    await wasm.default();
    const fetchBytes = async (name) => new Uint8Array(await (await fetch(`/bench-grids/${name}`)).arrayBuffer());
    const surface = await fetchBytes('valley_dem.tif');
    const ice = await fetchBytes('valley_ice_thickness.tif');
    const stages = await fetchBytes('valley_vegetation.tif');
    const seconds = [];
    let summary = null;
    let cells = 0;
    for (let i = 0; i < repeats; i += 1) {
      const run = new wasm.CoupledRun(scenario, surface, 'valley_dem.tif', ice, 'valley_ice_thickness.tif',
        stages, 'valley_vegetation.tif');
      const started = performance.now();
      while (run.stepYears(10) > 0) { /* all years */ }
      seconds.push((performance.now() - started) / 1000);
      summary = run.summary();
      cells = run.nCells();
      run.free();
    }
    return { seconds, summary, cells };
  }, { scenario: SCENARIO_JSON, repeats: REPEATS });
  const coupledSeconds = [...coupled.seconds].sort((a, b) => a - b);
  const coupledMedian = coupledSeconds[Math.floor(REPEATS / 2)];
  const coupledYears = coupled.summary.length - 1;
  const endStages = coupled.summary[coupledYears].vegetation.stage_area_km2;
  const coupledLine = {
    bench: 'coupled_run',
    side: 'wasm',
    years: coupledYears,
    plant_types: coupled.summary[0].vegetation.n_types,
    repeats: REPEATS,
    seconds_median: Number(coupledMedian.toFixed(4)),
    seconds_min: Number(coupledSeconds[0].toFixed(4)),
    seconds_max: Number(coupledSeconds[REPEATS - 1].toFixed(4)),
    seconds_per_year: Number((coupledMedian / coupledYears).toFixed(6)),
    cell_years_per_second: Math.round((coupled.cells * coupledYears) / coupledMedian),
    forest_area_km2_end: Number((endStages[5] + endStages[6]).toFixed(3)),
  };
  console.log(JSON.stringify(coupledLine));
  const nativeCoupled = nativeOf('coupled_run');
  if (nativeCoupled) {
    console.log(JSON.stringify({
      bench: 'coupled_run',
      side: 'ratio',
      wasm_over_native: Number((coupledMedian / nativeCoupled.seconds_median).toFixed(3)),
      same_end_forest: Math.abs(nativeCoupled.forest_area_km2_end - coupledLine.forest_area_km2_end) < 1e-3,
    }));
  }
  // Slider scrub: the page's draw path (engine render into wasm memory, a view, one
  // putImageData) for 100 random years of a recorded 200-year run on the large valley.
  const scrub = await page.evaluate(async ({ scenario }) => {
    const wasm = await import('/pkg/forefield_wasm.js');
    const memory = (await wasm.default()).memory;
    const fetchBytes = async (name) => new Uint8Array(await (await fetch(`/bench-grids/${name}`)).arrayBuffer());
    const surface = await fetchBytes('valley_dem.tif');
    const ice = await fetchBytes('valley_ice_thickness.tif');
    const stages = await fetchBytes('valley_vegetation.tif');
    // Recorded with plants, as the page's worker records, so the stage layer can be drawn.
    const recorder = wasm.RunRecorder.withPlants(scenario, surface, 'valley_dem.tif', ice,
      'valley_ice_thickness.tif', stages, 'valley_vegetation.tif');
    while (recorder.stepYear() !== null) { /* all years */ }
    const bytes = recorder.finish();
    recorder.free();
    const workspace = new wasm.Workspace();
    const terrain = workspace.loadTerrain(surface, 'valley_dem.tif');
    const timeline = workspace.loadTimeline(bytes);
    const canvas = document.createElement('canvas');
    canvas.width = terrain.n_cols;
    canvas.height = terrain.n_rows;
    const context = canvas.getContext('2d');
    // A fixed linear congruential sequence, so every bench run draws the same years.
    let state = 12345;
    const span = timeline.last_year - timeline.start_year + 1;
    const years = Array.from({ length: 100 }, () => {
      state = (Math.imul(state, 1103515245) + 12345) >>> 0;
      return timeline.start_year + (state % span);
    });
    const result = {};
    for (const layer of ['ice_thickness', 'exposure_year', 'stage', 'lakes', 'steep_bare']) {
      // One untimed draw first, as the page has always drawn a layer once before a scrub.
      workspace.renderLayer(layer, timeline.last_year);
      const ms = [];
      const renderMs = [];
      for (const year of years) {
        const started = performance.now();
        workspace.renderLayer(layer, year);
        renderMs.push(performance.now() - started);
        const pixels = new Uint8ClampedArray(memory.buffer, workspace.imagePtr(), workspace.imageLen());
        context.putImageData(new ImageData(pixels, terrain.n_cols, terrain.n_rows), 0, 0);
        ms.push(performance.now() - started);
      }
      ms.sort((a, b) => a - b);
      renderMs.sort((a, b) => a - b);
      result[layer] = { median: ms[50], worst: ms[99], engineMedian: renderMs[50] };
    }
    // Exports of the last year as the Export panel makes them: the cells table in chunks of
    // 16,384 rows (the longest chunk is what the page's thread is held for), the PNG snapshot
    // and the stage polygons.
    const exportsMs = {};
    let started = performance.now();
    workspace.startCellsCsv(timeline.last_year);
    let chunkWorst = 0;
    let csvBytes = 0;
    for (;;) {
      const chunkStarted = performance.now();
      const chunk = workspace.nextCellsCsvChunk(16384);
      chunkWorst = Math.max(chunkWorst, performance.now() - chunkStarted);
      if (chunk === undefined) break;
      csvBytes += chunk.length;
    }
    exportsMs.cellsCsv = performance.now() - started;
    started = performance.now();
    const png = workspace.exportSnapshot('stage', timeline.last_year);
    exportsMs.snapshot = performance.now() - started;
    started = performance.now();
    const geojson = workspace.exportStagePolygons(timeline.last_year);
    exportsMs.stagePolygons = performance.now() - started;
    workspace.free();
    return {
      cells: terrain.n_cols * terrain.n_rows, timeline, result,
      exports: { ...exportsMs, chunkWorst, csvBytes, pngBytes: png.length, geojsonBytes: geojson.length },
    };
  }, { scenario: SCENARIO_JSON });
  console.log(JSON.stringify({
    bench: 'slider_scrub',
    side: 'wasm',
    cells: scrub.cells,
    years: scrub.timeline.last_year - scrub.timeline.start_year,
    draws: 100,
    ice_thickness_ms_median: Number(scrub.result.ice_thickness.median.toFixed(2)),
    ice_thickness_ms_worst: Number(scrub.result.ice_thickness.worst.toFixed(2)),
    ice_thickness_engine_ms_median: Number(scrub.result.ice_thickness.engineMedian.toFixed(2)),
    exposure_year_ms_median: Number(scrub.result.exposure_year.median.toFixed(2)),
    exposure_year_ms_worst: Number(scrub.result.exposure_year.worst.toFixed(2)),
    exposure_year_engine_ms_median: Number(scrub.result.exposure_year.engineMedian.toFixed(2)),
    stage_ms_median: Number(scrub.result.stage.median.toFixed(2)),
    stage_ms_worst: Number(scrub.result.stage.worst.toFixed(2)),
    stage_engine_ms_median: Number(scrub.result.stage.engineMedian.toFixed(2)),
    timeline_keyframe_interval_years: scrub.timeline.keyframe_interval,
    timeline_stage_keyframe_interval_years: scrub.timeline.stage_keyframe_interval,
    timeline_cover_keyframe_interval_years: scrub.timeline.cover_keyframe_interval,
    timeline_mib: Number((scrub.timeline.memory_bytes / 2 ** 20).toFixed(2)),
    timeline_plant_mib: Number((scrub.timeline.plant_memory_bytes / 2 ** 20).toFixed(2)),
    lakes_ms_median: Number(scrub.result.lakes.median.toFixed(2)),
    lakes_ms_worst: Number(scrub.result.lakes.worst.toFixed(2)),
    steep_bare_ms_median: Number(scrub.result.steep_bare.median.toFixed(2)),
    steep_bare_ms_worst: Number(scrub.result.steep_bare.worst.toFixed(2)),
  }));
  const e = scrub.exports;
  console.log(JSON.stringify({
    bench: 'exports',
    side: 'wasm',
    cells: scrub.cells,
    cells_csv_seconds: Number((e.cellsCsv / 1000).toFixed(3)),
    cells_csv_mb: Number((e.csvBytes / 1e6).toFixed(1)),
    cells_csv_chunk_rows: 16384,
    cells_csv_chunk_ms_worst: Number(e.chunkWorst.toFixed(1)),
    snapshot_png_seconds: Number((e.snapshot / 1000).toFixed(3)),
    snapshot_png_kb: Math.round(e.pngBytes / 1e3),
    stage_geojson_seconds: Number((e.stagePolygons / 1000).toFixed(3)),
    stage_geojson_kb: Math.round(e.geojsonBytes / 1e3),
  }));
} finally {
  await browser.close();
}
