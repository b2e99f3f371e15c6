//! User-placed disturbances: a burn or a debris flow over a set of cells in a given year.
//!
//! Secondary succession after fire starts from kept soil and a soil seed bank, and so runs
//! faster than primary succession on fresh ground (Chapin et al. 1994, Ecol. Monogr.
//! 64(2):149-175, on the contrast of primary and secondary sequences; soils kept after stand
//! disturbance, Bormann et al. 1995, J. Ecol. 83:747-757). A debris flow buries or strips the
//! soil and leaves primary succession (common practice, no source).
//!
//! A scenario lists its events under `disturbances` with a GeoJSON polygon each, inline or
//! as a file name; `run::coupled::scenario_disturbances` turns them into cell sets once, at load, with the
//! outline reader's CRS checks.

use serde::{Deserialize, Serialize};

use crate::params::ScenarioError;
use crate::plants::pft::{check_range, VegetationError};

/// What a disturbance does.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DisturbanceKind {
    /// Removes cover; keeps soil and leaves a seed bank of the burnt types.
    Burn,
    /// Removes cover and soil.
    DebrisFlow,
}

/// Where a scenario's event strikes: a GeoJSON file name, resolved like the grid files
/// (relative to the scenario file on the command line), or a GeoJSON object written inline
/// (a Geometry, Feature or FeatureCollection with Polygon or MultiPolygon geometry, in the
/// grid's projected CRS).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum DisturbanceArea {
    File(String),
    Inline(serde_json::Value),
}

/// One event of a scenario's `disturbances` list.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DisturbanceEvent {
    /// Simulated year at whose start the event strikes: start_year + 1 to start_year +
    /// n_years.
    pub year: i32,
    /// `burn` or `debris_flow`.
    pub kind: DisturbanceKind,
    /// The area struck.
    pub polygon: DisturbanceArea,
}

impl DisturbanceEvent {
    /// Checks the year against the run and the polygon's form (its content is checked when
    /// it is rasterised). `field` is this event's place in the scenario, for messages.
    pub fn validate(
        &self,
        field: &str,
        start_year: i32,
        end_year: i32,
    ) -> Result<(), ScenarioError> {
        crate::params::check_range(
            &format!("{field}.year"),
            f64::from(self.year),
            f64::from(start_year) + 1.0,
            f64::from(end_year),
            "year",
        )?;
        let problem = match &self.polygon {
            DisturbanceArea::File(name) if name.trim().is_empty() => Some("file name is empty"),
            DisturbanceArea::Inline(value) if !value.is_object() => {
                Some("give a GeoJSON object or the name of a GeoJSON file")
            }
            _ => None,
        };
        match problem {
            Some(problem) => Err(ScenarioError::Invalid {
                field: format!("{field}.polygon"),
                problem: problem.to_string(),
            }),
            None => Ok(()),
        }
    }
}

/// One event: at the start of `year`, `kind` strikes the cells in `cells`.
#[derive(Clone, Debug, PartialEq)]
pub struct Disturbance {
    pub year: i32,
    pub kind: DisturbanceKind,
    /// Cell indices (row * n_cols + col), each once.
    pub cells: Vec<u32>,
}

impl Disturbance {
    /// An event over the cells where `mask` is true.
    pub fn from_mask(year: i32, kind: DisturbanceKind, mask: &[bool]) -> Disturbance {
        Disturbance {
            year,
            kind,
            cells: mask
                .iter()
                .enumerate()
                .filter(|(_, &m)| m)
                .map(|(i, _)| i as u32)
                .collect(),
        }
    }
}

/// Seed bank left by burns.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct SeedBankParams {
    /// Seeds in the bank per unit of burnt cover, as a multiple of one year's seed production
    /// of that cover (0 to 10).
    pub years_of_seed: f64,
    /// Years the bank keeps germinating after a burn (1 to 50); it empties evenly.
    pub duration_a: f64,
}

impl Default for SeedBankParams {
    fn default() -> Self {
        // Values from memory: persistent banks of forest herbs and shrubs hold a few years of
        // seed rain and last a few years to decades.
        SeedBankParams {
            years_of_seed: 2.0,
            duration_a: 5.0,
        }
    }
}

impl SeedBankParams {
    pub fn validate(&self) -> Result<(), VegetationError> {
        check_range(
            "seed_bank.years_of_seed",
            self.years_of_seed,
            0.0,
            10.0,
            "years",
        )?;
        check_range("seed_bank.duration_a", self.duration_a, 1.0, 50.0, "years")
    }
}

/// A validated event with room for its seed bank (filled when it strikes).
#[derive(Clone, Debug)]
pub(crate) struct ScheduledDisturbance {
    pub event: Disturbance,
    /// Seeds released per year per type per cell, type-major over `event.cells`.
    pub bank_seeds: Vec<f32>,
}
