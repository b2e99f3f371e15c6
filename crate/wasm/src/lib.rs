//! Thin wasm-bindgen layer over the Forefield engine: handles, small serde objects, and
//! typed-array views into wasm memory for images. No model logic lives here.

mod schema;

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

#[wasm_bindgen]
impl Workspace {
    #[wasm_bindgen(constructor)]
    pub fn new() -> Workspace {
        Workspace {
            terrain: None,
            timeline: None,
            image_rgba: Vec::new(),
            zone: None,
        }
    }

    /// Loads a DEM from a GeoTIFF, or from a 16-bit PNG when `sidecar_json` is given.
    /// On error the terrain loaded before stays.
    #[wasm_bindgen(js_name = loadTerrain)]
    pub fn load_terrain(
        &mut self,
        bytes: &[u8],
        file_name: &str,
        sidecar_json: Option<String>,
    ) -> Result<JsValue, JsError> {
        let dem = match sidecar_json {
            Some(sidecar) => read_heightmap_png(bytes, &sidecar, file_name)
                .map(|grid| ReadGrid { grid, note: None }),
            None => read_geotiff_with(bytes, file_name, ReadOptions::default()),
        }
        .map_err(to_js_error)?;
        let ReadGrid { grid: dem, note } = dem;
        let (lo, hi) = terrain::check_elevations(&dem, file_name).map_err(to_js_error)?;
        let derivatives = terrain::derivatives(&dem, Sun::default());
        let mut notes: Vec<String> = note.into_iter().collect();
        if dem.geometry.epsg.is_none() {
            notes.push("The file states no EPSG code; coordinates are shown as given.".into());
        }
        let info = TerrainInfo {
            file_name: file_name.to_string(),
            n_cols: dem.geometry.n_cols,
            n_rows: dem.geometry.n_rows,
            cell_size_m: dem.geometry.cell_size_m,
            west_m: dem.geometry.west_m,
            north_m: dem.geometry.north_m,
            epsg: dem.geometry.epsg,
            min_elevation_m: lo,
            max_elevation_m: hi,
            nodata_cells: dem.geometry.n_cells() - dem.n_valid(),
            notes,
            geojson_coordinates: coordinates_note(&dem.geometry),
        };
        // A run belongs to the terrain it was made on, and so does a zone.
        self.timeline = None;
        self.zone = None;
        self.terrain = Some(LoadedTerrain {
            file_name: file_name.to_string(),
            dem,
            derivatives,
            range: (lo, hi),
        });
        to_js(&info)
    }

    #[wasm_bindgen(js_name = hasTerrain)]
    pub fn has_terrain(&self) -> bool {
        self.terrain.is_some()
    }

    /// Name of the loaded terrain file, if any.
    #[wasm_bindgen(js_name = terrainFileName)]
    pub fn terrain_file_name(&self) -> Option<String> {
        self.terrain.as_ref().map(|t| t.file_name.clone())
    }

    /// Fills the RGBA image with the elevation ramp over the hillshade.
    #[wasm_bindgen(js_name = renderTerrain)]
    pub fn render_terrain(&mut self) -> Result<(), JsError> {
        let terrain = self
            .terrain
            .as_ref()
            .ok_or_else(|| JsError::new("no terrain is loaded"))?;
        render_shaded(
            &terrain.dem,
            &terrain.derivatives.hillshade,
            ELEVATION_RAMP,
            terrain.range.0,
            terrain.range.1,
            &mut self.image_rgba,
        );
        Ok(())
    }

    /// Address of the RGBA image in wasm memory; rebuild views after any call that allocates.
    #[wasm_bindgen(js_name = imagePtr)]
    pub fn image_ptr(&self) -> *const u8 {
        self.image_rgba.as_ptr()
    }

    #[wasm_bindgen(js_name = imageLen)]
    pub fn image_len(&self) -> usize {
        self.image_rgba.len()
    }

    #[wasm_bindgen(js_name = imageWidth)]
    pub fn image_width(&self) -> usize {
        self.terrain.as_ref().map_or(0, |t| t.dem.geometry.n_cols)
    }

    #[wasm_bindgen(js_name = imageHeight)]
    pub fn image_height(&self) -> usize {
        self.terrain.as_ref().map_or(0, |t| t.dem.geometry.n_rows)
    }

    /// Values at one cell, or `null` off the grid.
    pub fn readout(&self, col: usize, row: usize) -> Result<JsValue, JsError> {
        let Some(terrain) = self.terrain.as_ref() else {
            return Ok(JsValue::NULL);
        };
        let g = &terrain.dem.geometry;
        if col >= g.n_cols || row >= g.n_rows {
            return Ok(JsValue::NULL);
        }
        let idx = row * g.n_cols + col;
        let finite = |v: f32| v.is_finite().then_some(v);
        let (easting_m, northing_m) = g.cell_centre(col, row);
        to_js(&Readout {
            col,
            row,
            easting_m,
            northing_m,
            elevation_m: terrain.dem.get(col, row),
            slope_deg: finite(terrain.derivatives.slope_deg[idx]),
            aspect_deg: finite(terrain.derivatives.aspect_deg[idx]),
        })
    }

    /// Legend of the elevation layer.
    pub fn legend(&self) -> Result<JsValue, JsError> {
        let terrain = self
            .terrain
            .as_ref()
            .ok_or_else(|| JsError::new("no terrain is loaded"))?;
        let (lo, hi) = terrain.range;
        to_js(&Legend::continuous(
            "Surface elevation",
            "m",
            f64::from(lo),
            f64::from(hi),
            ELEVATION_RAMP,
        ))
    }
}

/// Timeline layers: a recorded run (from the worker) viewed year by year.
#[wasm_bindgen]
impl Workspace {
    /// Checks an ice source against the loaded terrain before a run: an ice-thickness
    /// GeoTIFF, or a GeoJSON glacier outline (by its name) whose thickness is estimated with
    /// the scenario's parameters (the defaults when `scenario_json` is absent or invalid).
    /// Returns notes on resampling or the estimate; the error names the file.
    #[wasm_bindgen(js_name = checkIce)]
    pub fn check_ice(
        &self,
        bytes: &[u8],
        name: &str,
        scenario_json: Option<String>,
    ) -> Result<JsValue, JsError> {
        let terrain = self.loaded_terrain()?;
        let notes = match ice_input(bytes, name)? {
            IceInput::Outline { geojson, name } => {
                let scenario = scenario_json
                    .and_then(|json| Scenario::from_json(&json).ok())
                    .unwrap_or_default();
                let (_, note) = inputs::outline_thickness(&terrain.dem, geojson, name, &scenario)
                    .map_err(|e| JsError::new(&e.to_string()))?;
                vec![note]
            }
            IceInput::Thickness { bytes, name } => {
                inputs::fit_ice_thickness(&terrain.dem.geometry, bytes, name)
                    .map_err(to_js_error)?
                    .1
                    .into_iter()
                    .collect()
            }
            IceInput::None => Vec::new(),
        };
        to_js(&notes)
    }

    /// Checks a glacier domain (a GeoTIFF mask, cells above zero inside, or a GeoJSON polygon)
    /// against the loaded terrain; returns notes (its area, any resampling), or an error naming
    /// the file.
    #[wasm_bindgen(js_name = checkDomain)]
    pub fn check_domain(&self, bytes: &[u8], name: &str) -> Result<JsValue, JsError> {
        let terrain = self.loaded_terrain()?;
        let (grid, note) = inputs::fit_domain(&terrain.dem.geometry, bytes, name)
            .map_err(|e| JsError::new(&e.to_string()))?;
        let inside = grid.values.iter().filter(|&&v| v > 0.0).count();
        if inside == 0 {
            return Err(JsError::new(&format!(
                "{name}: the glacier domain covers no cell of the terrain"
            )));
        }
        let mut notes = vec![format!(
            "{name}: glacier domain of {:.3} km² given; the balance adds ice only there",
            inside as f64 * terrain.dem.geometry.cell_area_m2() / 1e6
        )];
        notes.extend(note);
        to_js(&notes)
    }

    /// Checks a GeoTIFF of succession stage codes 0-6 against the loaded terrain; returns
    /// notes on resampling, or an error naming the file.
    #[wasm_bindgen(js_name = checkVegetation)]
    pub fn check_vegetation(&self, bytes: &[u8], name: &str) -> Result<JsValue, JsError> {
        let terrain = self.loaded_terrain()?;
        let (_, note) =
            inputs::fit_vegetation(&terrain.dem.geometry, bytes, name).map_err(to_js_error)?;
        to_js(&note.into_iter().collect::<Vec<_>>())
    }

    /// Takes a timeline recorded by [`RunRecorder::finish`] for the loaded terrain, and the
    /// scenario JSON it was run with (named in exports). On error the timeline loaded before
    /// stays.
    #[wasm_bindgen(js_name = loadTimeline)]
    pub fn load_timeline(
        &mut self,
        bytes: &[u8],
        scenario_json: Option<String>,
    ) -> Result<JsValue, JsError> {
        let scenario = match scenario_json {
            Some(json) => {
                Scenario::from_json(&json).map_err(|e| JsError::new(&format!("scenario: {e}")))?
            }
            None => Scenario::default(),
        };
        let terrain = self
            .terrain
            .as_ref()
            .ok_or_else(|| JsError::new("no terrain is loaded"))?;
        let timeline =
            Timeline::from_bytes(bytes).map_err(|e| JsError::new(&format!("run result: {e}")))?;
        let g = &terrain.dem.geometry;
        if timeline.n_cols() != g.n_cols || timeline.n_rows() != g.n_rows {
            return Err(JsError::new(&format!(
                "the run covers {} x {} cells but the terrain has {} x {}",
                timeline.n_cols(),
                timeline.n_rows(),
                g.n_cols,
                g.n_rows
            )));
        }
        // The same shading as the command line's snapshots: the bed under the starting ice.
        let renderer = bed_renderer(&terrain.dem, &timeline);
        let info = TimelineInfo {
            start_year: timeline.start_year(),
            last_year: timeline.last_year(),
            keyframe_interval: timeline.keyframe_interval(),
            memory_bytes: timeline.memory_bytes(),
            plant_memory_bytes: timeline.plant_memory_bytes(),
            type_names: timeline.type_names().to_vec(),
            stage_keyframe_interval: timeline.plant_intervals().map(|i| i.0),
            cover_keyframe_interval: timeline.plant_intervals().map(|i| i.1),
            run_notes: timeline
                .run_start()
                .map(|s| s.notes.clone())
                .unwrap_or_default(),
            lake_area_km2: renderer.lake_map().map_or_else(Vec::new, |lakes| {
                (timeline.start_year()..=timeline.last_year())
                    .map(|year| lakes.ice_free_area_m2(&timeline, year) / 1e6)
                    .collect()
            }),
        };
        let meta = ExportMeta::for_run(&scenario, &timeline);
        self.timeline = Some(LoadedTimeline {
            timeline,
            renderer,
            meta,
            cells_csv: None,
        });
        to_js(&info)
    }

    /// PNG snapshot of a layer at a year: one pixel per cell, with legend, scale bar, north
    /// arrow, year, scenario and caution; the same bytes as the command line's.
    #[wasm_bindgen(js_name = exportSnapshot)]
    pub fn export_snapshot(&mut self, layer: &str, year: i32) -> Result<Vec<u8>, JsError> {
        let terrain = self.terrain.as_ref().ok_or_else(no_terrain)?;
        let loaded = self.timeline.as_mut().ok_or_else(no_run)?;
        let kind = layer_kind(&loaded.timeline, layer).map_err(export_error)?;
        let snapshot = snapshot_png(
            &loaded.timeline,
            &mut loaded.renderer,
            &terrain.dem,
            &loaded.meta,
            kind,
            year,
        )
        .map_err(export_error)?;
        Ok(snapshot.png)
    }

    /// A layer at a year as a GeoTIFF georeferenced like the terrain.
    #[wasm_bindgen(js_name = exportLayerGeotiff)]
    pub fn export_layer_geotiff(&self, layer: &str, year: i32) -> Result<Vec<u8>, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        let kind = layer_kind(&loaded.timeline, layer).map_err(export_error)?;
        layer_geotiff(&loaded.timeline, &terrain.dem, &loaded.meta, kind, year)
            .map_err(export_error)
    }

    /// The file-name stem the command line uses for a layer (e.g. `cover_grasses_and_sedges`).
    #[wasm_bindgen(js_name = layerFileStem)]
    pub fn layer_file_stem(&self, layer: &str) -> Result<String, JsError> {
        let (_, loaded) = self.run_parts()?;
        let kind = layer_kind(&loaded.timeline, layer).map_err(export_error)?;
        Ok(layer_file_stem(&loaded.timeline, kind))
    }

    /// Ice outlines at the end of each year as RFC 7946 GeoJSON.
    #[wasm_bindgen(js_name = exportIceOutlines)]
    pub fn export_ice_outlines(&self, years: Vec<i32>) -> Result<String, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        ice_outlines_geojson(&loaded.timeline, &terrain.dem, &loaded.meta, &years)
            .map_err(export_error)
    }

    /// Polygons of each succession stage at the end of a year as RFC 7946 GeoJSON.
    #[wasm_bindgen(js_name = exportStagePolygons)]
    pub fn export_stage_polygons(&self, year: i32) -> Result<String, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        stage_polygons_geojson(&loaded.timeline, &terrain.dem, &loaded.meta, year)
            .map_err(export_error)
    }

    /// One cell's history (every year) as RFC 4180 CSV.
    #[wasm_bindgen(js_name = exportCellHistory)]
    pub fn export_cell_history(&self, col: usize, row: usize) -> Result<String, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        cell_history_csv(&loaded.timeline, &terrain.dem, &loaded.meta, &[(col, row)])
            .map_err(export_error)
    }

    /// Starts streaming the cells of a year as RFC 4180 CSV; returns the number of data rows.
    /// Take the table with [`Workspace::next_cells_csv_chunk`] until it returns `undefined`.
    #[wasm_bindgen(js_name = startCellsCsv)]
    pub fn start_cells_csv(&mut self, year: i32) -> Result<usize, JsError> {
        let terrain = self.terrain.as_ref().ok_or_else(no_terrain)?;
        let loaded = self.timeline.as_mut().ok_or_else(no_run)?;
        let stream = CellsCsv::new(&loaded.timeline, &terrain.dem, &loaded.meta, year)
            .map_err(export_error)?;
        let total = stream.rows_total();
        loaded.cells_csv = Some(stream);
        Ok(total)
    }

    /// The next chunk of at most `max_rows` rows of the cells table as UTF-8 bytes, or
    /// `undefined` when it is done (the stream is then dropped).
    #[wasm_bindgen(js_name = nextCellsCsvChunk)]
    pub fn next_cells_csv_chunk(&mut self, max_rows: usize) -> Result<Option<Vec<u8>>, JsError> {
        let terrain = self.terrain.as_ref().ok_or_else(no_terrain)?;
        let loaded = self.timeline.as_mut().ok_or_else(no_run)?;
        let stream = loaded
            .cells_csv
            .as_mut()
            .ok_or_else(|| JsError::new("no cells table is being written"))?;
        let chunk = stream
            .next_chunk(&loaded.timeline, &terrain.dem, max_rows.max(1))
            .map_err(export_error)?;
        if chunk.is_none() {
            loaded.cells_csv = None;
        }
        Ok(chunk)
    }

    #[wasm_bindgen(js_name = hasTimeline)]
    pub fn has_timeline(&self) -> bool {
        self.timeline.is_some()
    }

    /// Fills the RGBA image with `layer` at `year`: "ice_thickness", "exposure_year", and for
    /// runs with plants "stage", "cover:<type index>" and "soil".
    #[wasm_bindgen(js_name = renderLayer)]
    pub fn render_layer(&mut self, layer: &str, year: i32) -> Result<(), JsError> {
        let loaded = self.timeline.as_mut().ok_or_else(no_run)?;
        let kind = layer_kind(&loaded.timeline, layer).map_err(layer_error)?;
        loaded
            .renderer
            .render(&loaded.timeline, kind, year, &mut self.image_rgba);
        Ok(())
    }

    /// Legend of a timeline layer.
    #[wasm_bindgen(js_name = layerLegend)]
    pub fn layer_legend(&self, layer: &str) -> Result<JsValue, JsError> {
        let loaded = self.timeline.as_ref().ok_or_else(no_run)?;
        let kind = layer_kind(&loaded.timeline, layer).map_err(layer_error)?;
        to_js(&layers::legend(&loaded.timeline, kind))
    }

    /// One cell's ice thickness for every recorded year and its exposure year, or `null`
    /// off the grid.
    #[wasm_bindgen(js_name = cellHistory)]
    pub fn cell_history(&self, col: usize, row: usize) -> Result<JsValue, JsError> {
        let Some(loaded) = self.timeline.as_ref() else {
            return Ok(JsValue::NULL);
        };
        let timeline = &loaded.timeline;
        if col >= timeline.n_cols() || row >= timeline.n_rows() {
            return Ok(JsValue::NULL);
        }
        let idx = row * timeline.n_cols() + col;
        let years: Vec<i32> = (timeline.start_year()..=timeline.last_year()).collect();
        let ice_thickness_m = years
            .iter()
            .map(|&y| timeline.ice_thickness_at(idx, y))
            .collect();
        let series = |quantity| -> Vec<f32> {
            years
                .iter()
                .map(|&y| timeline.plant_value_at(idx, y, quantity).unwrap_or(0.0))
                .collect()
        };
        let cover = (0..timeline.type_names().len())
            .map(|t| series(PlantQuantity::Cover(t)))
            .collect();
        let soil = if timeline.has_plants() {
            series(PlantQuantity::Soil)
        } else {
            Vec::new()
        };
        to_js(&CellHistory {
            col,
            row,
            years,
            ice_thickness_m,
            exposure_year: timeline.cover_at(idx, timeline.last_year()).1,
            covered_at_start: timeline.covered_at_start(idx),
            stage: if timeline.has_plants() {
                timeline.stage_history(idx)
            } else {
                Vec::new()
            },
            cover,
            soil,
            cover_keyframe_years: timeline.cover_keyframe_years(),
        })
    }
}

/// What the page learns about a loaded zone.
#[derive(Serialize)]
struct ZoneInfo {
    name: String,
    n_cells: usize,
    area_km2: f64,
    csv_file_name: String,
    /// Polygon rings in grid cells from the north-west corner (x = column, y = row), to
    /// draw the outline.
    rings: Vec<Vec<[f32; 2]>>,
}

/// Zones: a GeoJSON polygon file rasterised once onto the terrain, read through a run.
#[wasm_bindgen]
impl Workspace {
    /// Loads a zone (GeoJSON polygons in the terrain's CRS) onto the loaded terrain; it stays
    /// for later runs until another terrain is loaded. On error the zone loaded before stays.
    #[wasm_bindgen(js_name = loadZone)]
    pub fn load_zone(&mut self, geojson_text: &str, file_name: &str) -> Result<JsValue, JsError> {
        let terrain = self.loaded_terrain()?;
        let zone = Zone::from_geojson(geojson_text, file_name, &terrain.dem)
            .map_err(|e| JsError::new(&e.to_string()))?;
        let g = &terrain.dem.geometry;
        let rings = read_outline(geojson_text, file_name, g)
            .map(|outline| {
                outline
                    .polygons
                    .iter()
                    .flat_map(|p| std::iter::once(p.exterior()).chain(p.interiors()))
                    .map(|ring| {
                        ring.coords()
                            .map(|c| {
                                [
                                    ((c.x - g.west_m) / g.cell_size_m) as f32,
                                    ((g.north_m - c.y) / g.cell_size_m) as f32,
                                ]
                            })
                            .collect()
                    })
                    .collect()
            })
            .unwrap_or_default();
        let info = ZoneInfo {
            name: zone.name().to_string(),
            n_cells: zone.n_cells(),
            area_km2: zone.area_km2(),
            csv_file_name: zone.csv_file_name(),
            rings,
        };
        self.zone = Some(zone);
        to_js(&info)
    }

    #[wasm_bindgen(js_name = hasZone)]
    pub fn has_zone(&self) -> bool {
        self.zone.is_some()
    }

    /// The zone through the loaded run: per-year arrays and the key years.
    #[wasm_bindgen(js_name = zoneTimeline)]
    pub fn zone_timeline(&self) -> Result<JsValue, JsError> {
        let (_, loaded) = self.run_parts()?;
        let zone = self.zone.as_ref().ok_or_else(no_zone)?;
        to_js(&zone_timeline(&loaded.timeline, zone).map_err(export_error)?)
    }

    /// The zone's timeline as RFC 4180 CSV, the same bytes as `forefield export --zone`.
    #[wasm_bindgen(js_name = exportZoneCsv)]
    pub fn export_zone_csv(&self) -> Result<String, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        let zone = self.zone.as_ref().ok_or_else(no_zone)?;
        zone_timeline_csv(&loaded.timeline, &terrain.dem, zone, &loaded.meta).map_err(export_error)
    }
}

fn no_zone() -> JsError {
    JsError::new("no zone is loaded; open a zone GeoJSON first")
}

/// The scenario a new page starts from, as JSON text.
#[wasm_bindgen(js_name = defaultScenarioJson)]
pub fn default_scenario_json() -> String {
    Scenario::default().to_json()
}

/// The form's fields: group, label, explanation, default, range and unit of each.
#[wasm_bindgen(js_name = scenarioSchema)]
pub fn scenario_schema() -> Result<JsValue, JsError> {
    #[derive(Serialize)]
    struct Schema {
        groups: Vec<(&'static str, &'static str)>,
        fields: Vec<schema::FieldSchema>,
    }
    to_js(&Schema {
        groups: schema::GROUPS.to_vec(),
        fields: schema::scenario_schema(),
    })
}

/// `null` when the engine accepts the scenario JSON, else `{ field, message }`.
#[wasm_bindgen(js_name = checkScenario)]
pub fn check_scenario(json: &str) -> Result<JsValue, JsError> {
    match schema::check_scenario(json) {
        None => Ok(JsValue::NULL),
        Some(problem) => to_js(&problem),
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

/// A running ice simulation over grids handed in as GeoTIFF bytes; the page steps it year by
/// year (so it can report progress and stop) and reads layers as views into wasm memory.
#[wasm_bindgen]
pub struct IceRun {
    simulation: IceSimulation,
}

#[wasm_bindgen]
impl IceRun {
    /// Builds a run from a scenario (JSON text), a surface DEM and an ice-thickness grid.
    #[wasm_bindgen(constructor)]
    pub fn new(
        scenario_json: &str,
        surface_bytes: &[u8],
        surface_name: &str,
        ice_bytes: &[u8],
        ice_name: &str,
    ) -> Result<IceRun, JsError> {
        let RunInputs { scenario, grids } = read_run_inputs(
            scenario_json,
            surface_bytes,
            surface_name,
            ice_bytes,
            ice_name,
            None,
        )?;
        let simulation = IceSimulation::new(&grids.bed_m, &grids.ice_thickness_m, &scenario)
            .map_err(|e| JsError::new(&e.to_string()))?;
        Ok(IceRun { simulation })
    }

    /// Simulates up to `n_years` more years; returns how many were simulated (0 when done).
    #[wasm_bindgen(js_name = stepYears)]
    pub fn step_years(&mut self, n_years: u32) -> u32 {
        let mut done = 0;
        while done < n_years && self.simulation.step_year().is_some() {
            done += 1;
        }
        done
    }

    /// Year whose end state is held.
    pub fn year(&self) -> i32 {
        self.simulation.year()
    }

    #[wasm_bindgen(js_name = endYear)]
    pub fn end_year(&self) -> i32 {
        self.simulation.end_year()
    }

    /// Yearly summary rows so far (start state first).
    pub fn summary(&self) -> Result<JsValue, JsError> {
        to_js(&self.simulation.summary())
    }

    #[wasm_bindgen(js_name = nCells)]
    pub fn n_cells(&self) -> usize {
        self.simulation.geometry().n_cells()
    }

    /// Address of the `f32` ice-thickness layer (m), `nCells()` long.
    #[wasm_bindgen(js_name = iceThicknessPtr)]
    pub fn ice_thickness_ptr(&self) -> *const f32 {
        self.simulation.ice_thickness_m().as_ptr()
    }

    /// Address of the `i32` exposure-year layer, `nCells()` long.
    #[wasm_bindgen(js_name = exposureYearPtr)]
    pub fn exposure_year_ptr(&self) -> *const i32 {
        self.simulation.year_exposed().as_ptr()
    }
}

/// A run recorded year by year into a timeline: what the page's worker drives. A thin
/// handle over the engine's [`RecordedRun`], which the command line drives too.
#[wasm_bindgen]
pub struct RunRecorder {
    run: RecordedRun,
    meta: ExportMeta,
    summary_csv: Option<String>,
}

#[wasm_bindgen]
impl RunRecorder {
    /// An ice-only run, as [`IceRun::new`]; the timeline starts from the initial ice.
    #[wasm_bindgen(constructor)]
    pub fn new(
        scenario_json: &str,
        surface_bytes: &[u8],
        surface_name: &str,
        ice_bytes: &[u8],
        ice_name: &str,
    ) -> Result<RunRecorder, JsError> {
        let RunInputs { scenario, grids } = read_run_inputs(
            scenario_json,
            surface_bytes,
            surface_name,
            ice_bytes,
            ice_name,
            None,
        )?;
        let run = RecordedRun::ice_only(&grids.bed_m, &grids.ice_thickness_m, None, &scenario)
            .map_err(|e| JsError::new(&e.to_string()))?;
        Ok(RunRecorder {
            meta: ExportMeta {
                run_notes: run.ice().start_notes(),
                ..ExportMeta::from_scenario(&scenario)
            },
            run,
            summary_csv: None,
        })
    }

    /// A coupled run of ice and plants (the scenario's `vegetation` block), starting from a
    /// grid of succession stage codes 0-6 when `vegetation_bytes` is given, else from each
    /// cell's potential vegetation. The timeline keeps stages, covers and soil too.
    #[wasm_bindgen(js_name = withPlants)]
    #[allow(clippy::too_many_arguments)]
    pub fn with_plants(
        scenario_json: &str,
        surface_bytes: &[u8],
        surface_name: &str,
        ice_bytes: &[u8],
        ice_name: &str,
        vegetation_bytes: Option<Vec<u8>>,
        vegetation_name: Option<String>,
        domain_bytes: Option<Vec<u8>>,
        domain_name: Option<String>,
    ) -> Result<RunRecorder, JsError> {
        let vegetation_name = vegetation_name.unwrap_or_else(|| "vegetation grid".to_string());
        let RunInputs { scenario, grids } = read_run_inputs(
            scenario_json,
            surface_bytes,
            surface_name,
            ice_bytes,
            ice_name,
            vegetation_bytes
                .as_deref()
                .map(|bytes| (bytes, vegetation_name.as_str())),
        )?;
        let domain = match domain_bytes {
            Some(bytes) => {
                let name = domain_name.unwrap_or_else(|| "glacier domain".to_string());
                let (grid, _) = inputs::fit_domain(&grids.surface_m.geometry, &bytes, &name)
                    .map_err(|e| JsError::new(&e.to_string()))?;
                Some(grid)
            }
            None => None,
        };
        let run = RecordedRun::with_plants(
            &grids.bed_m,
            &grids.ice_thickness_m,
            domain.as_ref(),
            &scenario,
            grids.vegetation.as_ref(),
            |name| {
                Err(format!(
                    "{name}: the page reads no files a scenario names; write the polygon into \
                     the scenario as a GeoJSON object instead"
                ))
            },
        )
        .map_err(|e| JsError::new(&e.to_string()))?;
        Ok(RunRecorder {
            meta: ExportMeta {
                run_notes: run.ice().start_notes(),
                ..ExportMeta::from_scenario(&scenario)
            },
            run,
            summary_csv: None,
        })
    }

    /// Simulates and records the next year; returns its summary row, or `null` when done.
    #[wasm_bindgen(js_name = stepYear)]
    pub fn step_year(&mut self) -> Result<JsValue, JsError> {
        match self.run.step_year() {
            Some(row) => to_js(&row),
            None => Ok(JsValue::NULL),
        }
    }

    pub fn year(&self) -> i32 {
        self.run.year()
    }

    #[wasm_bindgen(js_name = startYear)]
    pub fn start_year(&self) -> i32 {
        self.run.start_year()
    }

    #[wasm_bindgen(js_name = endYear)]
    pub fn end_year(&self) -> i32 {
        self.run.end_year()
    }

    /// Summary rows so far (start state first); rows of runs with plants carry `vegetation`.
    pub fn summary(&self) -> Result<JsValue, JsError> {
        to_js(&self.run.rows())
    }

    /// Ends recording and returns the timeline as bytes (for `Workspace.loadTimeline`).
    pub fn finish(&mut self) -> Result<Vec<u8>, JsError> {
        let timeline = self
            .run
            .finish()
            .map_err(|e| JsError::new(&e.to_string()))?;
        // The finished timeline's notes include what the run warned about on the way.
        if let Some(start) = timeline.run_start() {
            self.meta.run_notes.clone_from(&start.notes);
        }
        self.summary_csv = Some(summary_csv(
            self.run.rows(),
            timeline.type_names(),
            &self.meta,
        ));
        Ok(timeline.to_bytes())
    }

    /// The yearly summary as RFC 4180 CSV, the same bytes as the command line's
    /// `summary.csv`; available after [`RunRecorder::finish`].
    #[wasm_bindgen(js_name = summaryCsv)]
    pub fn summary_csv(&self) -> Result<String, JsError> {
        self.summary_csv
            .clone()
            .ok_or_else(|| JsError::new("the run is not finished"))
    }
}

/// A running coupled simulation (ice and plants) over grids handed in as GeoTIFF bytes,
/// stepped by the page like [`IceRun`].
#[wasm_bindgen]
pub struct CoupledRun {
    simulation: forefield_engine::run::coupled::CoupledSimulation,
    rows: Vec<forefield_engine::run::coupled::CoupledYearSummary>,
}

#[wasm_bindgen]
impl CoupledRun {
    /// Builds a run from a scenario (JSON text, its `vegetation` block sets the plants), a
    /// surface DEM, an ice-thickness grid and a grid of succession stage codes 0-6.
    #[wasm_bindgen(constructor)]
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        scenario_json: &str,
        surface_bytes: &[u8],
        surface_name: &str,
        ice_bytes: &[u8],
        ice_name: &str,
        vegetation_bytes: &[u8],
        vegetation_name: &str,
    ) -> Result<CoupledRun, JsError> {
        let RunInputs { scenario, grids } = read_run_inputs(
            scenario_json,
            surface_bytes,
            surface_name,
            ice_bytes,
            ice_name,
            Some((vegetation_bytes, vegetation_name)),
        )?;
        let simulation = forefield_engine::run::coupled::CoupledSimulation::new(
            &grids.bed_m,
            &grids.ice_thickness_m,
            &scenario,
            grids.vegetation.as_ref(),
        )
        .map_err(|e| JsError::new(&e.to_string()))?;
        let rows = vec![simulation.start_summary()];
        Ok(CoupledRun { simulation, rows })
    }

    /// Simulates up to `n_years` more years; returns how many were simulated (0 when done).
    #[wasm_bindgen(js_name = stepYears)]
    pub fn step_years(&mut self, n_years: u32) -> u32 {
        let mut done = 0;
        while done < n_years {
            let Some(row) = self.simulation.step_year() else {
                break;
            };
            self.rows.push(row);
            done += 1;
        }
        done
    }

    /// Year whose end state is held.
    pub fn year(&self) -> i32 {
        self.simulation.year()
    }

    /// Yearly summary rows so far (start state first): `{ ice, vegetation }` each.
    pub fn summary(&self) -> Result<JsValue, JsError> {
        to_js(&self.rows)
    }

    #[wasm_bindgen(js_name = nCells)]
    pub fn n_cells(&self) -> usize {
        self.simulation.ice().geometry().n_cells()
    }
}

/// Layers of a coupled run, read as views into wasm memory (the engine's own numbers, for
/// checking what a timeline shows).
#[wasm_bindgen]
impl CoupledRun {
    /// Address of the `u8` succession-stage layer, `nCells()` long.
    #[wasm_bindgen(js_name = stagePtr)]
    pub fn stage_ptr(&self) -> *const u8 {
        self.simulation.stage().as_ptr()
    }

    /// Number of plant types.
    #[wasm_bindgen(js_name = nTypes)]
    pub fn n_types(&self) -> usize {
        self.simulation.vegetation().n_types()
    }

    /// Address of the `f32` cover layer of type `type_idx` (fraction), `nCells()` long.
    #[wasm_bindgen(js_name = coverPtr)]
    pub fn cover_ptr(&self, type_idx: usize) -> Result<*const f32, JsError> {
        if type_idx >= self.n_types() {
            return Err(JsError::new(&format!(
                "plant type {type_idx} out of range (the run has {})",
                self.n_types()
            )));
        }
        Ok(self.simulation.cover_of(type_idx).as_ptr())
    }

    /// Address of the `f32` soil-index layer, `nCells()` long.
    #[wasm_bindgen(js_name = soilPtr)]
    pub fn soil_ptr(&self) -> *const f32 {
        self.simulation.soil().as_ptr()
    }
}
