//! A run on the page: its inputs checked on load, the recorded timeline loaded, a layer and
//! year drawn, a cell's history.

use super::*;

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
