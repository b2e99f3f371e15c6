//! Run handles: `RunRecorder` (the worker's run), and `IceRun` and `CoupledRun`, plain
//! stepping handles for the benchmark and the browser tests.

use super::*;

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
