//! Scenario file: the versioned JSON that names the input grids and sets the years, climate,
//! mass-balance, flow and vegetation parameters and the random seed of a run.
//!
//! Unknown fields are an error, missing fields take documented defaults, and every number is
//! checked against a stated range before a run starts; the error names the field, the value
//! and the range. The `version` field is required so a file written for another layout is
//! refused rather than misread.

use serde::{Deserialize, Serialize};

use crate::ice::climate::ClimateParams;
use crate::ice::flow::FlowParams;
use crate::ice::mass_balance::MassBalanceParams;
use crate::ice::outline_thickness::PlasticityParams;
use crate::plants::disturbance::DisturbanceEvent;
use crate::plants::pft::VegetationError;
use crate::plants::vegetation::VegetationParams;

/// The scenario layout this engine reads and writes.
pub const SCENARIO_VERSION: u32 = 1;

/// Largest seed: integers above 2^53 do not survive a trip through JavaScript numbers.
pub const MAX_SEED: u64 = (1 << 53) - 1;

/// Most years one scenario may simulate.
pub const MAX_YEARS: u32 = 2000;

pub use crate::params::{check_range, ScenarioError};

/// Input grid file names; the command line resolves them relative to the scenario file.
///
/// Allowed combinations: bed + thickness; surface + thickness (bed = surface - thickness);
/// surface + glacier mask (thickness estimated from the surface slope, see `ice::outline_thickness`);
/// bed or surface alone (no ice at the start).
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GridFiles {
    /// Ice-surface (or ground-surface where ice-free) elevation, m, GeoTIFF.
    pub surface_elevation: Option<String>,
    /// Bed (ice-free ground) elevation, m, GeoTIFF.
    pub bed_elevation: Option<String>,
    /// Initial ice thickness, m, GeoTIFF; nodata counts as no ice.
    pub ice_thickness: Option<String>,
    /// Where the glacier lies: a GeoTIFF mask (cells above zero) or a GeoJSON outline.
    /// `glacier_mask`, its earlier name, still loads.
    #[serde(alias = "glacier_mask")]
    pub glacier_outline_or_mask: Option<String>,
    /// Glacier domain, where the balance may add ice: a GeoTIFF (cells above zero) or a
    /// GeoJSON polygon. Default: the starting ice, the ground touching it and the ground
    /// draining into them.
    pub glacier_domain: Option<String>,
}

impl GridFiles {
    /// Checks that the named grids form one of the allowed combinations.
    pub fn validate(&self) -> Result<(), ScenarioError> {
        let problem = match (
            self.surface_elevation.is_some(),
            self.bed_elevation.is_some(),
            self.ice_thickness.is_some(),
            self.glacier_outline_or_mask.is_some(),
        ) {
            (false, false, _, _) => Some("name surface_elevation or bed_elevation"),
            (true, true, true, _) => Some(
                "give two of surface_elevation, bed_elevation and ice_thickness, not all three",
            ),
            (_, _, true, true) => Some("give ice_thickness or glacier_outline_or_mask, not both"),
            (false, true, _, true) => {
                Some("glacier_outline_or_mask needs surface_elevation to estimate thickness")
            }
            _ => None,
        };
        for (field, name) in [
            ("grids.surface_elevation", &self.surface_elevation),
            ("grids.bed_elevation", &self.bed_elevation),
            ("grids.ice_thickness", &self.ice_thickness),
            (
                "grids.glacier_outline_or_mask",
                &self.glacier_outline_or_mask,
            ),
            ("grids.glacier_domain", &self.glacier_domain),
        ] {
            if name.as_deref().is_some_and(|n| n.trim().is_empty()) {
                return Err(ScenarioError::Invalid {
                    field: field.to_string(),
                    problem: "file name is empty".to_string(),
                });
            }
        }
        match problem {
            Some(problem) => Err(ScenarioError::Invalid {
                field: "grids".to_string(),
                problem: problem.to_string(),
            }),
            None => Ok(()),
        }
    }
}

fn default_start_year() -> i32 {
    2025
}

fn default_n_years() -> u32 {
    100
}

/// Default start-up relaxation, years: long enough for the flow to settle a surveyed or
/// estimated thickness field (the real-terrain reference check's outline estimate stops
/// spreading after about 10 years; measured), short against the decades of glacier response
/// (own choice, no source).
pub const DEFAULT_RELAXATION_YEARS: u32 = 10;

fn default_relaxation_years() -> u32 {
    DEFAULT_RELAXATION_YEARS
}

fn default_name() -> String {
    "unnamed scenario".to_string()
}

/// A whole scenario. Construct with [`Scenario::from_json`] (parses and validates) or
/// start from `Scenario::default()` and call [`Scenario::validate`].
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    /// Layout version; must equal [`SCENARIO_VERSION`].
    pub version: u32,
    /// Free text shown in outputs.
    #[serde(default = "default_name")]
    pub name: String,
    #[serde(default)]
    pub grids: GridFiles,
    /// Year the input grids describe (end of that year), -10000 to 10000. Default 2025.
    #[serde(default = "default_start_year")]
    pub start_year: i32,
    /// Years to simulate after the start year, 1 to 2000. Default 100.
    #[serde(default = "default_n_years")]
    pub n_years: u32,
    /// Years the ice relaxes at the start year's climate before the start year, 0 to 200.
    /// Default 10: the given thickness is seldom in balance with the model's flow.
    #[serde(default = "default_relaxation_years")]
    pub relaxation_years: u32,
    /// Years whose ice thickness is written out, each from start_year to start_year + n_years.
    #[serde(default)]
    pub output_years: Vec<i32>,
    #[serde(default)]
    pub climate: ClimateParams,
    #[serde(default)]
    pub mass_balance: MassBalanceParams,
    #[serde(default)]
    pub flow: FlowParams,
    /// Thickness estimate inside the glacier, used when `grids.glacier_outline_or_mask` is
    /// given.
    #[serde(default)]
    pub outline: PlasticityParams,
    /// Seed for every random choice of the run, 0 to 2^53 - 1. Same seed, same numbers.
    #[serde(default)]
    pub seed: u64,
    /// Plant types, soil, growing season, stage thresholds, seed bank and dispersal grid
    /// of the colonisation model.
    #[serde(default)]
    pub vegetation: VegetationParams,
    /// Burns and debris flows placed by the planner, each with a year and a GeoJSON polygon
    /// (inline or a file name); rasterised at load by
    /// [`crate::plants::disturbance::scenario_disturbances`].
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub disturbances: Vec<DisturbanceEvent>,
}

impl Default for Scenario {
    fn default() -> Self {
        Scenario {
            version: SCENARIO_VERSION,
            name: default_name(),
            grids: GridFiles::default(),
            start_year: default_start_year(),
            n_years: default_n_years(),
            relaxation_years: DEFAULT_RELAXATION_YEARS,
            output_years: Vec::new(),
            climate: ClimateParams::default(),
            mass_balance: MassBalanceParams::default(),
            flow: FlowParams::default(),
            outline: PlasticityParams::default(),
            seed: 0,
            vegetation: VegetationParams::default(),
            disturbances: Vec::new(),
        }
    }
}

impl Scenario {
    /// Parses and validates a scenario. The version is checked first so that a file of
    /// another layout reports its version, not a confusing field error.
    pub fn from_json(text: &str) -> Result<Scenario, ScenarioError> {
        let value: serde_json::Value =
            serde_json::from_str(text).map_err(|e| ScenarioError::Json(e.to_string()))?;
        match value.get("version") {
            None => {
                return Err(ScenarioError::Invalid {
                    field: "version".to_string(),
                    problem: format!("missing; write \"version\": {SCENARIO_VERSION}"),
                })
            }
            Some(v) if v.as_u64() != Some(u64::from(SCENARIO_VERSION)) => {
                return Err(ScenarioError::Version {
                    found: v.to_string(),
                    supported: SCENARIO_VERSION,
                })
            }
            Some(_) => {}
        }
        let scenario: Scenario =
            serde_json::from_value(value).map_err(|e| ScenarioError::Json(e.to_string()))?;
        scenario.validate()?;
        Ok(scenario)
    }

    /// The scenario as pretty JSON, for saving and sharing.
    pub fn to_json(&self) -> String {
        // Serialising plain data with string keys cannot fail.
        serde_json::to_string_pretty(self).unwrap_or_default()
    }

    /// Checks every field; grid names are checked only when at least one is given, so a
    /// scenario built in code around grids already in memory may leave them empty.
    pub fn validate(&self) -> Result<(), ScenarioError> {
        if self.version != SCENARIO_VERSION {
            return Err(ScenarioError::Version {
                found: self.version.to_string(),
                supported: SCENARIO_VERSION,
            });
        }
        if self.grids != GridFiles::default() {
            self.grids.validate()?;
        }
        check_range(
            "start_year",
            f64::from(self.start_year),
            -10000.0,
            10000.0,
            "year",
        )?;
        check_range(
            "n_years",
            f64::from(self.n_years),
            1.0,
            f64::from(MAX_YEARS),
            "years",
        )?;
        check_range(
            "relaxation_years",
            f64::from(self.relaxation_years),
            0.0,
            200.0,
            "years",
        )?;
        let last_year = f64::from(self.start_year) + f64::from(self.n_years);
        for (i, &year) in self.output_years.iter().enumerate() {
            check_range(
                &format!("output_years[{i}]"),
                f64::from(year),
                f64::from(self.start_year),
                last_year,
                "year",
            )?;
        }
        check_range("seed", self.seed as f64, 0.0, MAX_SEED as f64, "")?;
        self.climate.validate()?;
        self.mass_balance.validate()?;
        self.flow.validate()?;
        self.outline.validate()?;
        self.vegetation.validate().map_err(vegetation_error)?;
        for (i, event) in self.disturbances.iter().enumerate() {
            event.validate(
                &format!("disturbances[{i}]"),
                self.start_year,
                self.end_year(),
            )?;
        }
        Ok(())
    }

    /// Last simulated year.
    pub fn end_year(&self) -> i32 {
        self.start_year + self.n_years as i32
    }
}

/// A vegetation error as a scenario error, its field under `vegetation.`.
fn vegetation_error(e: VegetationError) -> ScenarioError {
    let field = |name: String| format!("vegetation.{name}");
    match e {
        VegetationError::OutOfRange {
            field: name,
            value,
            min,
            max,
            unit,
        } => ScenarioError::OutOfRange {
            field: field(name),
            value,
            min,
            max,
            unit,
        },
        VegetationError::Invalid {
            field: name,
            problem,
        } => ScenarioError::Invalid {
            field: field(name),
            problem,
        },
        other => ScenarioError::Invalid {
            field: "vegetation".to_string(),
            problem: other.to_string(),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn minimal_file_takes_defaults() {
        let scenario = Scenario::from_json(r#"{"version": 1}"#).expect("valid");
        assert_eq!(scenario, Scenario::default());
    }

    #[test]
    fn round_trips_through_json() {
        let mut scenario = Scenario {
            output_years: vec![2030, 2100],
            ..Scenario::default()
        };
        scenario.grids.bed_elevation = Some("bed.tif".to_string());
        let back = Scenario::from_json(&scenario.to_json()).expect("valid");
        assert_eq!(back, scenario);
    }

    #[test]
    fn unknown_fields_are_errors() {
        let err =
            Scenario::from_json(r#"{"version": 1, "mass_balance": {"ela": 3000}}"#).unwrap_err();
        assert!(matches!(err, ScenarioError::Json(_)));
        assert!(err.to_string().contains("ela"), "{err}");
    }

    #[test]
    fn wrong_or_missing_version_is_refused() {
        assert!(matches!(
            Scenario::from_json(r#"{"version": 2}"#),
            Err(ScenarioError::Version { .. })
        ));
        assert!(matches!(
            Scenario::from_json("{}"),
            Err(ScenarioError::Invalid { .. })
        ));
    }

    #[test]
    fn out_of_range_values_name_field_value_and_range() {
        let err = Scenario::from_json(r#"{"version": 1, "flow": {"ice_density_kg_m3": 2000}}"#)
            .unwrap_err();
        let message = err.to_string();
        assert!(message.contains("flow.ice_density_kg_m3"), "{message}");
        assert!(message.contains("2000"), "{message}");
        assert!(message.contains("800"), "{message}");
        let err = Scenario::from_json(r#"{"version": 1, "n_years": 10, "output_years": [2100]}"#)
            .unwrap_err();
        assert!(err.to_string().contains("output_years[0]"), "{err}");
    }

    #[test]
    fn grid_combinations_are_checked() {
        let err = Scenario::from_json(
            r#"{"version": 1, "grids": {"bed_elevation": "b.tif", "glacier_mask": "m.tif"}}"#,
        )
        .unwrap_err();
        assert!(err.to_string().contains("glacier_outline_or_mask"), "{err}");
        // Scenario files written before the rename still load.
        let old = Scenario::from_json(
            r#"{"version": 1, "grids": {"surface_elevation": "s.tif", "glacier_mask": "m.geojson"}}"#,
        )
        .unwrap();
        assert_eq!(
            old.grids.glacier_outline_or_mask.as_deref(),
            Some("m.geojson")
        );
        assert!(old.to_json().contains("glacier_outline_or_mask"));
    }

    #[test]
    fn disturbances_take_a_file_or_an_inline_polygon_and_a_year_inside_the_run() {
        use crate::plants::disturbance::{DisturbanceArea, DisturbanceKind};
        let text = r#"{"version": 1, "start_year": 2025, "n_years": 50, "disturbances": [
            {"year": 2040, "kind": "burn", "polygon": "burn.geojson"},
            {"year": 2075, "kind": "debris_flow", "polygon":
                {"type": "Polygon", "coordinates": [[[0, 0], [10, 0], [10, 10], [0, 0]]]}}]}"#;
        let scenario = Scenario::from_json(text).expect("valid");
        assert_eq!(scenario.disturbances[0].kind, DisturbanceKind::Burn);
        assert_eq!(
            scenario.disturbances[0].polygon,
            DisturbanceArea::File("burn.geojson".to_string())
        );
        assert!(matches!(
            scenario.disturbances[1].polygon,
            DisturbanceArea::Inline(_)
        ));
        assert_eq!(Scenario::from_json(&scenario.to_json()), Ok(scenario));
        for (year, ok) in [(2025, false), (2026, true), (2075, true), (2076, false)] {
            let text = format!(
                r#"{{"version": 1, "n_years": 50, "disturbances": [{{"year": {year}, "kind": "burn", "polygon": "b.geojson"}}]}}"#
            );
            let result = Scenario::from_json(&text);
            assert_eq!(result.is_ok(), ok, "{year}: {result:?}");
            if let Err(e) = result {
                assert!(e.to_string().contains("disturbances[0].year"), "{e}");
            }
        }
        let err = Scenario::from_json(
            r#"{"version": 1, "disturbances": [{"year": 2030, "kind": "flood", "polygon": "b.geojson"}]}"#,
        )
        .unwrap_err();
        assert!(err.to_string().contains("flood"), "{err}");
        let err = Scenario::from_json(
            r#"{"version": 1, "disturbances": [{"year": 2030, "kind": "burn", "polygon": 3}]}"#,
        )
        .unwrap_err();
        assert!(err.to_string().contains("disturbances[0].polygon"), "{err}");
    }

    #[test]
    fn vegetation_block_configures_plants_and_names_bad_fields() {
        let scenario =
            Scenario::from_json(r#"{"version": 1, "vegetation": {"dispersal_cell_size_m": 100}}"#)
                .expect("valid");
        assert_eq!(scenario.vegetation.dispersal_cell_size_m, 100.0);
        assert_eq!(scenario.vegetation.types.len(), 5);
        let mut bad = Scenario::default();
        bad.vegetation.types[2].mean_dispersal_m = -3.0;
        let message = Scenario::from_json(&bad.to_json()).unwrap_err().to_string();
        assert!(
            message.contains("vegetation.types[2].mean_dispersal_m"),
            "{message}"
        );
    }
}
