//! A run recorded year by year into a [`Timeline`] plus its yearly summary rows: the one
//! recording loop that the page's worker and the command line both drive, so the two record
//! identical timelines and summaries for the same inputs (own design).

use serde::Serialize;
use thiserror::Error;

use crate::base::grid::Grid;
use crate::plants::vegetation::VegetationYearSummary;
use crate::run::coupled::{CoupledError, CoupledSimulation};
use crate::run::recorder::TimelineRecorder;
use crate::run::scenario::Scenario;
use crate::run::simulation::{IceSimulation, SimulationError, YearSummary};
use crate::run::timeline::{
    RunStart, Timeline, DEFAULT_COVER_BUDGET_BYTES, DEFAULT_FRAME_BUDGET_BYTES,
    DEFAULT_STAGE_BUDGET_BYTES,
};

/// A recorded run could not be built or finished.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum RecordedRunError {
    #[error(transparent)]
    Ice(#[from] SimulationError),
    #[error(transparent)]
    Coupled(#[from] CoupledError),
    #[error("this run has already been finished")]
    Finished,
}

/// One yearly summary row: the ice fields, and `vegetation` for runs with plants. Serialised
/// flat (the ice fields at the top level), as the page reads it.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct RecordedRow {
    #[serde(flatten)]
    pub ice: YearSummary,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub vegetation: Option<VegetationYearSummary>,
}

/// The simulation a [`RecordedRun`] drives: ice alone, or ice and plants.
#[derive(Clone, Debug)]
pub enum RecordedSimulation {
    Ice(Box<IceSimulation>),
    Coupled(Box<CoupledSimulation>),
}

impl RecordedSimulation {
    pub fn ice(&self) -> &IceSimulation {
        match self {
            RecordedSimulation::Ice(ice) => ice,
            RecordedSimulation::Coupled(coupled) => coupled.ice(),
        }
    }

    /// The coupled simulation, for runs with plants.
    pub fn coupled(&self) -> Option<&CoupledSimulation> {
        match self {
            RecordedSimulation::Ice(_) => None,
            RecordedSimulation::Coupled(coupled) => Some(coupled),
        }
    }
}

/// The covers of every plant type of a coupled run, as slices.
fn covers_of(coupled: &CoupledSimulation) -> Vec<&[f32]> {
    (0..coupled.vegetation().n_types())
        .map(|t| coupled.cover_of(t))
        .collect()
}

fn ice_recorder(simulation: &IceSimulation, bed_m: &Grid) -> TimelineRecorder {
    TimelineRecorder::new(
        simulation.geometry().n_cols,
        simulation.start_year(),
        (simulation.end_year() - simulation.start_year()) as u32,
        simulation.ice_thickness_m(),
        DEFAULT_FRAME_BUDGET_BYTES,
    )
    .with_start(RunStart {
        bed_m: bed_m.values.clone(),
        domain: simulation.domain().to_vec(),
        notes: simulation.start_notes(),
    })
}

/// A run recorded year by year: the simulation, the timeline being recorded and the summary
/// rows so far (start state first).
#[derive(Clone, Debug)]
pub struct RecordedRun {
    simulation: RecordedSimulation,
    recorder: Option<TimelineRecorder>,
    rows: Vec<RecordedRow>,
}

impl RecordedRun {
    /// An ice-only run over `bed_m` with `ice_thickness_m` at the start.
    pub fn ice_only(
        bed_m: &Grid,
        ice_thickness_m: &Grid,
        domain: Option<&Grid>,
        scenario: &Scenario,
    ) -> Result<RecordedRun, RecordedRunError> {
        let simulation = IceSimulation::with_domain(bed_m, ice_thickness_m, domain, scenario)?;
        let recorder = ice_recorder(&simulation, bed_m);
        let rows = vec![RecordedRow {
            ice: simulation.summary()[0],
            vegetation: None,
        }];
        Ok(RecordedRun {
            simulation: RecordedSimulation::Ice(Box::new(simulation)),
            recorder: Some(recorder),
            rows,
        })
    }

    /// A coupled run of ice and plants (the scenario's `vegetation` block), starting from
    /// `initial_stages` (succession stage codes 0-6) when given, else from each cell's
    /// potential vegetation, with the scenario's `disturbances` scheduled; polygon files they
    /// name come from `read_file` (see [`crate::plants::disturbance::scenario_disturbances`]). The
    /// timeline keeps stages, covers and soil too.
    pub fn with_plants<F>(
        bed_m: &Grid,
        ice_thickness_m: &Grid,
        domain: Option<&Grid>,
        scenario: &Scenario,
        initial_stages: Option<&Grid>,
        read_file: F,
    ) -> Result<RecordedRun, RecordedRunError>
    where
        F: FnMut(&str) -> Result<Vec<u8>, String>,
    {
        let mut coupled = CoupledSimulation::with_domain(
            bed_m,
            ice_thickness_m,
            domain,
            scenario,
            initial_stages,
        )?;
        coupled.add_scenario_disturbances(scenario, read_file)?;
        let names = scenario
            .vegetation
            .types
            .iter()
            .map(|t| t.name.clone())
            .collect();
        let recorder = ice_recorder(coupled.ice(), bed_m).with_plants(
            names,
            coupled.stage(),
            &covers_of(&coupled),
            coupled.soil(),
            DEFAULT_STAGE_BUDGET_BYTES,
            DEFAULT_COVER_BUDGET_BYTES,
        );
        let start = coupled.start_summary();
        Ok(RecordedRun {
            simulation: RecordedSimulation::Coupled(Box::new(coupled)),
            recorder: Some(recorder),
            rows: vec![RecordedRow {
                ice: start.ice,
                vegetation: Some(start.vegetation),
            }],
        })
    }

    /// Simulates and records the next year; its summary row, or `None` when the scenario's
    /// years are done or the run was finished.
    pub fn step_year(&mut self) -> Option<RecordedRow> {
        let recorder = self.recorder.as_mut()?;
        let row = match &mut self.simulation {
            RecordedSimulation::Ice(ice) => {
                let row = ice.step_year()?;
                recorder.record_year(row.year, ice.ice_thickness_m());
                RecordedRow {
                    ice: row,
                    vegetation: None,
                }
            }
            RecordedSimulation::Coupled(coupled) => {
                let row = coupled.step_year()?;
                recorder.record_year(row.ice.year, coupled.ice().ice_thickness_m());
                recorder.record_plants(
                    row.ice.year,
                    coupled.stage(),
                    &covers_of(coupled),
                    coupled.soil(),
                );
                RecordedRow {
                    ice: row.ice,
                    vegetation: Some(row.vegetation),
                }
            }
        };
        self.rows.push(row);
        Some(row)
    }

    /// Ends recording: the timeline up to the last simulated year. A second call fails.
    pub fn finish(&mut self) -> Result<Timeline, RecordedRunError> {
        let mut recorder = self.recorder.take().ok_or(RecordedRunError::Finished)?;
        recorder.add_notes(self.simulation.ice().end_notes());
        Ok(match &self.simulation {
            RecordedSimulation::Ice(ice) => recorder.finish(ice.ice_thickness_m()),
            RecordedSimulation::Coupled(coupled) => recorder.finish_with_plants(
                coupled.ice().ice_thickness_m(),
                &covers_of(coupled),
                coupled.soil(),
            ),
        })
    }

    /// Summary rows so far, start state first.
    pub fn rows(&self) -> &[RecordedRow] {
        &self.rows
    }

    pub fn simulation(&self) -> &RecordedSimulation {
        &self.simulation
    }

    pub fn ice(&self) -> &IceSimulation {
        self.simulation.ice()
    }

    /// Year whose end state is held.
    pub fn year(&self) -> i32 {
        self.ice().year()
    }

    pub fn start_year(&self) -> i32 {
        self.ice().start_year()
    }

    pub fn end_year(&self) -> i32 {
        self.ice().end_year()
    }

    pub fn has_plants(&self) -> bool {
        self.simulation.coupled().is_some()
    }

    pub fn is_finished(&self) -> bool {
        self.recorder.is_none()
    }
}
