//! Thin wasm-bindgen layer over the Forefield engine: handles, small serde objects, and
//! typed-array views into wasm memory for images. No model logic lives here.

mod dem;
mod exports;
mod handles;
mod run;
mod scenario;
mod schema;
mod zones;

use forefield_engine::base::terrain::{self, Sun, TerrainDerivatives};
use forefield_engine::export::csv_tables::{cell_history_csv, summary_csv, CellsCsv};
use forefield_engine::export::geojson_shapes::{
    coordinates_note, ice_outlines_geojson, stage_polygons_geojson,
};
use forefield_engine::export::layer_geotiff::layer_geotiff;
use forefield_engine::export::png_snapshot::snapshot_png;
use forefield_engine::export::zones::{zone_timeline, zone_timeline_csv, Zone};
use forefield_engine::export::{
    bed_renderer, layer_file_stem, layer_kind, ExportError, ExportMeta,
};
use forefield_engine::io::geotiff::{read_geotiff_with, ReadGrid, ReadOptions};
use forefield_engine::io::heightmap_png::read_heightmap_png;
use forefield_engine::io::outline::read_outline;
use forefield_engine::run::inputs::{self, IceInput};
use forefield_engine::run::recorded::RecordedRun;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::simulation::IceSimulation;
use forefield_engine::run::timeline::{PlantQuantity, Timeline};
use forefield_engine::view::layers::{self, LayerRenderer};
use forefield_engine::view::render::{render_shaded, Legend, ELEVATION_RAMP};
use forefield_engine::{Grid, LoadError};
use serde::Serialize;
use wasm_bindgen::prelude::*;

#[wasm_bindgen(start)]
pub fn start() {
    console_error_panic_hook::set_once();
}

/// Summary of a loaded terrain grid, returned to the page.
#[derive(Serialize)]
struct TerrainInfo {
    file_name: String,
    n_cols: usize,
    n_rows: usize,
    cell_size_m: f64,
    west_m: f64,
    north_m: f64,
    epsg: Option<u32>,
    min_elevation_m: f32,
    max_elevation_m: f32,
    nodata_cells: usize,
    notes: Vec<String>,
    /// What the GeoJSON exports' positions are on this terrain.
    geojson_coordinates: String,
}

#[derive(Serialize)]
struct Readout {
    col: usize,
    row: usize,
    easting_m: f64,
    northing_m: f64,
    elevation_m: Option<f32>,
    slope_deg: Option<f32>,
    aspect_deg: Option<f32>,
}

struct LoadedTerrain {
    file_name: String,
    dem: Grid,
    derivatives: TerrainDerivatives,
    range: (f32, f32),
}

/// A recorded run loaded for viewing, with the shading of the bed under it.
struct LoadedTimeline {
    timeline: Timeline,
    renderer: LayerRenderer,
    /// Scenario name and seed the exports state.
    meta: ExportMeta,
    /// The cells table being streamed out, if one is.
    cells_csv: Option<CellsCsv>,
}

/// What the page learns about a loaded timeline.
#[derive(Serialize)]
struct TimelineInfo {
    start_year: i32,
    last_year: i32,
    keyframe_interval: u32,
    memory_bytes: usize,
    /// Bytes of the memory figure that hold stages, covers and soil.
    plant_memory_bytes: usize,
    /// Plant types recorded (empty for an ice-only run).
    type_names: Vec<String>,
    /// Years between stage keyframes and between cover keyframes (runs with plants).
    stage_keyframe_interval: Option<u32>,
    cover_keyframe_interval: Option<u32>,
    /// Area of the new lakes ice-free at the end of each year, start first, km2.
    lake_area_km2: Vec<f64>,
    /// How the run's ice was set up: the ELA and its calibration, relaxation, domain.
    run_notes: Vec<String>,
}

/// One cell through the recorded years.
#[derive(Serialize)]
struct CellHistory {
    col: usize,
    row: usize,
    years: Vec<i32>,
    ice_thickness_m: Vec<f32>,
    /// Latest year the cell became ice-free by the last year, if it did.
    exposure_year: Option<i32>,
    covered_at_start: bool,
    /// Succession stage per year (runs with plants; empty otherwise).
    stage: Vec<u8>,
    /// Cover per type (outer) and year (inner), fraction, as drawn on the map.
    cover: Vec<Vec<f32>>,
    /// Soil development index per year, as drawn.
    soil: Vec<f32>,
    /// Years that hold a cover keyframe (the others are interpolated).
    cover_keyframe_years: Vec<i32>,
}

/// Everything the page has loaded, held in wasm memory behind one handle.
#[wasm_bindgen]
pub struct Workspace {
    terrain: Option<LoadedTerrain>,
    timeline: Option<LoadedTimeline>,
    image_rgba: Vec<u8>,
    /// A planner's zone on the loaded terrain.
    zone: Option<Zone>,
}

impl Workspace {
    fn loaded_terrain(&self) -> Result<&LoadedTerrain, JsError> {
        self.terrain.as_ref().ok_or_else(no_terrain)
    }

    fn run_parts(&self) -> Result<(&LoadedTerrain, &LoadedTimeline), JsError> {
        Ok((
            self.loaded_terrain()?,
            self.timeline.as_ref().ok_or_else(no_run)?,
        ))
    }
}

fn no_terrain() -> JsError {
    JsError::new("no terrain is loaded")
}

fn no_run() -> JsError {
    JsError::new("no run is loaded; run the scenario first")
}

fn layer_error(error: ExportError) -> JsError {
    JsError::new(&error.to_string())
}

fn export_error(error: ExportError) -> JsError {
    JsError::new(&format!("export: {error}"))
}

impl Default for Workspace {
    fn default() -> Self {
        Self::new()
    }
}

/// What every run starts from: the checked scenario, the surface, the bed under the ice and
/// the ice itself.
/// A scenario and the grids of a run, fitted onto the surface grid by the engine.
struct RunInputs {
    scenario: Scenario,
    grids: inputs::RunInputs,
}

/// Reads a run's inputs; `ice_name` ending in `.geojson` or `.json` makes `ice_bytes` a
/// glacier outline (UTF-8 GeoJSON) whose thickness the engine estimates.
fn read_run_inputs(
    scenario_json: &str,
    surface_bytes: &[u8],
    surface_name: &str,
    ice_bytes: &[u8],
    ice_name: &str,
    vegetation: Option<(&[u8], &str)>,
) -> Result<RunInputs, JsError> {
    let scenario =
        Scenario::from_json(scenario_json).map_err(|e| JsError::new(&format!("scenario: {e}")))?;
    let ice = ice_input(ice_bytes, ice_name)?;
    let grids = inputs::read_run_inputs(
        &scenario,
        surface_bytes,
        surface_name,
        ReadOptions::default(),
        ice,
        vegetation,
    )
    .map_err(|e| JsError::new(&e.to_string()))?;
    Ok(RunInputs { scenario, grids })
}

fn is_geojson_name(name: &str) -> bool {
    let lower = name.to_ascii_lowercase();
    lower.ends_with(".geojson") || lower.ends_with(".json")
}

fn ice_input<'a>(bytes: &'a [u8], name: &'a str) -> Result<IceInput<'a>, JsError> {
    if is_geojson_name(name) {
        let geojson = std::str::from_utf8(bytes)
            .map_err(|_| JsError::new(&format!("{name}: not UTF-8 text, so not GeoJSON")))?;
        Ok(IceInput::Outline { geojson, name })
    } else {
        Ok(IceInput::Thickness { bytes, name })
    }
}

fn to_js<T: Serialize>(value: &T) -> Result<JsValue, JsError> {
    value
        .serialize(&serde_wasm_bindgen::Serializer::json_compatible())
        .map_err(|e| JsError::new(&e.to_string()))
}

fn to_js_error(error: LoadError) -> JsError {
    JsError::new(&error.to_string())
}
