//! The coupled yearly run: the ice simulation (`simulation`) and the colonisation model
//! (`vegetation`) advanced together, the plants seeing each year's ice, exposure years and
//! temperature anomaly.

use thiserror::Error;

use crate::base::grid::Grid;
use crate::base::grid::GridGeometry;
use crate::base::terrain::{derivatives, Sun};
use crate::io::outline::outline_mask;
use crate::plants::disturbance::{Disturbance, DisturbanceArea};
use crate::plants::pft::VegetationError;
use crate::plants::vegetation::{VegetationModel, VegetationYearSummary, N_STAGES};
use crate::run::scenario::{Scenario, ScenarioError};
use crate::run::simulation::{IceSimulation, SimulationError, YearSummary};

/// A coupled run could not be built.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum CoupledError {
    #[error(transparent)]
    Ice(#[from] SimulationError),
    #[error("vegetation: {0}")]
    Vegetation(#[from] VegetationError),
    #[error("initial vegetation grid does not line up with the bed grid")]
    Misaligned,
    #[error(transparent)]
    Scenario(#[from] ScenarioError),
}

/// One row of the coupled yearly summary.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct CoupledYearSummary {
    pub ice: YearSummary,
    pub vegetation: VegetationYearSummary,
}

/// Ice and vegetation in one yearly loop.
#[derive(Clone, Debug)]
pub struct CoupledSimulation {
    ice: IceSimulation,
    vegetation: VegetationModel,
    start: VegetationYearSummary,
}

impl CoupledSimulation {
    /// Validates everything and prepares the run; the plants come from
    /// `scenario.vegetation`. `initial_vegetation` holds stage codes 0-6
    /// ([`crate::plants::vegetation_code`]); without it ice-free suitable ground starts at
    /// its potential vegetation. Random choices use `scenario.seed`.
    pub fn new(
        bed_m: &Grid,
        ice_thickness_m: &Grid,
        scenario: &Scenario,
        initial_vegetation: Option<&Grid>,
    ) -> Result<CoupledSimulation, CoupledError> {
        Self::with_domain(bed_m, ice_thickness_m, None, scenario, initial_vegetation)
    }

    /// As [`CoupledSimulation::new`], with a glacier domain grid (see
    /// [`IceSimulation::with_domain`]).
    pub fn with_domain(
        bed_m: &Grid,
        ice_thickness_m: &Grid,
        domain: Option<&Grid>,
        scenario: &Scenario,
        initial_vegetation: Option<&Grid>,
    ) -> Result<CoupledSimulation, CoupledError> {
        let ice = IceSimulation::with_domain(bed_m, ice_thickness_m, domain, scenario)?;
        let geometry = bed_m.geometry;
        let stages = match initial_vegetation {
            Some(grid) => {
                if !grid.geometry.aligns_with(&geometry) {
                    return Err(CoupledError::Misaligned);
                }
                let mut codes = vec![0u8; geometry.n_cells()];
                for (i, (&v, &missing)) in grid.values.iter().zip(&grid.nodata).enumerate() {
                    codes[i] = if missing {
                        crate::plants::vegetation_code::BARE
                    } else if v >= 0.0 && v < N_STAGES as f32 && v.fract() == 0.0 {
                        v as u8
                    } else {
                        return Err(VegetationError::BadCell {
                            layer: "initial vegetation",
                            row: i / geometry.n_cols,
                            col: i % geometry.n_cols,
                            value: f64::from(v),
                            what: "stage code (0 to 6)",
                        }
                        .into());
                    };
                }
                Some(codes)
            }
            None => None,
        };
        let slope = derivatives(bed_m, Sun::default()).slope_deg;
        let anomaly = ice.summary()[0].temperature_anomaly_c;
        let model = VegetationModel::new(
            &scenario.vegetation,
            &geometry,
            &bed_m.values,
            &slope,
            ice.ice_thickness_m(),
            stages.as_deref(),
            anomaly,
            scenario.seed,
        )?;
        let start = model.summarise(ice.start_year());
        Ok(CoupledSimulation {
            ice,
            vegetation: model,
            start,
        })
    }

    /// Rasterises the scenario's `disturbances` on the plant grid and schedules them; named
    /// polygon files come from `read_file` (see [`scenario_disturbances`]). Call once,
    /// before the first year, with the scenario the run was built from.
    pub fn add_scenario_disturbances<F>(
        &mut self,
        scenario: &Scenario,
        read_file: F,
    ) -> Result<(), CoupledError>
    where
        F: FnMut(&str) -> Result<Vec<u8>, String>,
    {
        let events = scenario_disturbances(scenario, self.ice.geometry(), read_file)?;
        self.add_disturbances(events)
    }

    /// Schedules disturbance events; each must strike in a year still to be simulated.
    pub fn add_disturbances(&mut self, events: Vec<Disturbance>) -> Result<(), CoupledError> {
        let (first, last) = (self.ice.year() + 1, self.ice.end_year());
        for event in events {
            if event.year < first || event.year > last {
                return Err(VegetationError::Invalid {
                    field: "disturbances".to_string(),
                    problem: format!(
                        "an event in year {} lies outside the years still to run, {first} to {last}",
                        event.year
                    ),
                }
                .into());
            }
            self.vegetation.add_disturbance(event)?;
        }
        Ok(())
    }

    /// Simulates the next year; `None` once the scenario's years are done.
    pub fn step_year(&mut self) -> Option<CoupledYearSummary> {
        let ice = self.ice.step_year()?;
        let vegetation = self.vegetation.step_year(
            ice.year,
            self.ice.ice_thickness_m(),
            self.ice.year_exposed(),
            ice.temperature_anomaly_c,
        );
        Some(CoupledYearSummary { ice, vegetation })
    }

    /// The vegetation summary of the start state.
    pub fn start_summary(&self) -> CoupledYearSummary {
        CoupledYearSummary {
            ice: self.ice.summary()[0],
            vegetation: self.start,
        }
    }

    pub fn ice(&self) -> &IceSimulation {
        &self.ice
    }

    pub fn vegetation(&self) -> &VegetationModel {
        &self.vegetation
    }

    /// Mutable vegetation, to schedule disturbances.
    pub fn vegetation_mut(&mut self) -> &mut VegetationModel {
        &mut self.vegetation
    }

    /// Succession stage per cell at the end of the current year.
    pub fn stage(&self) -> &[u8] {
        self.vegetation.stage()
    }

    /// Cover of one plant type per cell.
    pub fn cover_of(&self, type_idx: usize) -> &[f32] {
        self.vegetation.cover_of(type_idx)
    }

    /// Soil development index per cell.
    pub fn soil(&self) -> &[f32] {
        self.vegetation.soil()
    }

    pub fn year(&self) -> i32 {
        self.ice.year()
    }

    pub fn is_finished(&self) -> bool {
        self.ice.is_finished()
    }
}

/// The scenario's disturbance events as cell sets on `grid` (the plant grid), in the
/// scenario's order. `read_file` returns the bytes of a named GeoJSON file, or a message
/// saying why it cannot (the command line reads it next to the scenario; the page looks
/// among the files the planner gave). Errors name the event's field.
pub fn scenario_disturbances<F>(
    scenario: &Scenario,
    grid: &GridGeometry,
    mut read_file: F,
) -> Result<Vec<Disturbance>, ScenarioError>
where
    F: FnMut(&str) -> Result<Vec<u8>, String>,
{
    let mut events = Vec::with_capacity(scenario.disturbances.len());
    for (i, event) in scenario.disturbances.iter().enumerate() {
        let field = format!("disturbances[{i}].polygon");
        let invalid = |problem: String| ScenarioError::Invalid {
            field: field.clone(),
            problem,
        };
        let (text, file) = match &event.polygon {
            DisturbanceArea::File(name) => {
                let bytes = read_file(name).map_err(|e| invalid(format!("{name}: {e}")))?;
                let text = String::from_utf8(bytes)
                    .map_err(|_| invalid(format!("{name}: not UTF-8 text")))?;
                (text, name.clone())
            }
            DisturbanceArea::Inline(value) => (value.to_string(), "inline polygon".to_string()),
        };
        let mask = outline_mask(&text, &file, grid).map_err(|e| invalid(e.to_string()))?;
        events.push(Disturbance::from_mask(event.year, event.kind, &mask));
    }
    Ok(events)
}
