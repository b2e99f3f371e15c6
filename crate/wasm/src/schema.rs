//! The scenario form's schema: which fields the page shows, in which group, with a one-line
//! explanation. Defaults come from `Scenario::default()` and every range and unit is read from
//! the engine's own validation (each field is set far out of range and the engine's
//! `OutOfRange` error names the range), so the page never repeats a number by hand.

use forefield_engine::scenario::{Scenario, ScenarioError};
use serde::Serialize;
use serde_json::Value;

/// How a field is entered.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FieldKind {
    Number,
    Integer,
    Text,
}

/// One form field.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct FieldSchema {
    /// Dotted path in the scenario JSON, as the engine names it in messages.
    pub path: String,
    pub group: &'static str,
    pub label: &'static str,
    pub help: &'static str,
    pub kind: FieldKind,
    /// May be left empty (the engine then uses the rule given in the help).
    pub optional: bool,
    pub default: Value,
    pub min: Option<f64>,
    pub max: Option<f64>,
    pub unit: String,
}

/// Groups in display order.
pub const GROUPS: [(&str, &str); 3] = [("run", "Run"), ("climate", "Climate"), ("ice", "Ice")];

/// (path, group, label, kind, optional, explanation).
const FIELDS: &[(&str, &str, &str, FieldKind, bool, &str)] = &[
    (
        "name",
        "run",
        "Scenario name",
        FieldKind::Text,
        false,
        "Shown in exports and saved files.",
    ),
    (
        "start_year",
        "run",
        "Start year",
        FieldKind::Integer,
        false,
        "The year the input grids describe (their state at its end).",
    ),
    (
        "n_years",
        "run",
        "Years to simulate",
        FieldKind::Integer,
        false,
        "How many years the run covers after the start year.",
    ),
    (
        "seed",
        "run",
        "Random seed",
        FieldKind::Integer,
        false,
        "Same seed, same numbers: change it to see another random outcome.",
    ),
    (
        "climate.warming_c_per_decade",
        "climate",
        "Warming rate",
        FieldKind::Number,
        false,
        "Linear change of summer temperature; negative values cool.",
    ),
    (
        "climate.warming_start_year",
        "climate",
        "Warming starts",
        FieldKind::Number,
        true,
        "Year the trend starts from zero; empty means the start year.",
    ),
    (
        "climate.solar_cycle_amplitude_k",
        "climate",
        "Solar-cycle amplitude",
        FieldKind::Number,
        false,
        "Half the swing of the 11-year solar cycle; 0 turns it off.",
    ),
    (
        "climate.solar_max_year",
        "climate",
        "A solar maximum",
        FieldKind::Number,
        false,
        "Any year of solar maximum; sets the phase of the cycle.",
    ),
    (
        "mass_balance.ela_m",
        "ice",
        "Equilibrium-line altitude",
        FieldKind::Number,
        false,
        "Height where yearly snow gain equals melt, before warming.",
    ),
    (
        "mass_balance.ela_sensitivity_m_per_k",
        "ice",
        "ELA rise per degree",
        FieldKind::Number,
        false,
        "How far the equilibrium line climbs per degree of warming.",
    ),
    (
        "mass_balance.gradient_below_ela_mwe_per_100m",
        "ice",
        "Balance gradient below ELA",
        FieldKind::Number,
        false,
        "Extra melt per 100 m below the equilibrium line.",
    ),
    (
        "mass_balance.gradient_above_ela_mwe_per_100m",
        "ice",
        "Balance gradient above ELA",
        FieldKind::Number,
        true,
        "Extra snow gain per 100 m above it; empty uses the gradient below.",
    ),
    (
        "mass_balance.max_accumulation_mwe_per_a",
        "ice",
        "Largest accumulation",
        FieldKind::Number,
        false,
        "Cap on yearly snow gain high on the glacier.",
    ),
    (
        "flow.rate_factor_pa3_s",
        "ice",
        "Ice softness (Glen A)",
        FieldKind::Number,
        false,
        "Glen's flow-law rate factor; larger flows faster (warmer ice).",
    ),
    (
        "flow.ice_density_kg_m3",
        "ice",
        "Ice density",
        FieldKind::Number,
        false,
        "Density of glacier ice.",
    ),
    (
        "flow.sliding_pa3_m2_s",
        "ice",
        "Basal sliding",
        FieldKind::Number,
        false,
        "Sliding coefficient; 0 means the ice moves by deformation only.",
    ),
    (
        "flow.ice_cell_size_m",
        "ice",
        "Ice-grid cell size",
        FieldKind::Number,
        false,
        "Ice flow runs on this coarser grid; finer is slower.",
    ),
    (
        "flow.time_step_fraction",
        "ice",
        "Time-step safety",
        FieldKind::Number,
        false,
        "Share of the stability limit used as time step; lower is safer.",
    ),
];

fn get<'a>(value: &'a Value, path: &str) -> Option<&'a Value> {
    path.split('.').try_fold(value, |v, key| v.get(key))
}

fn set(value: &mut Value, path: &str, new: Value) {
    let mut target = value;
    let keys: Vec<&str> = path.split('.').collect();
    for key in &keys[..keys.len() - 1] {
        target = &mut target[*key];
    }
    target[keys[keys.len() - 1]] = new;
}

/// The range and unit the engine states for a numeric field, by asking it to validate a
/// value no range admits.
fn probe_range(defaults: &Value, path: &str, kind: FieldKind) -> Option<(f64, f64, String)> {
    let mut probe = defaults.clone();
    let far = match kind {
        FieldKind::Integer if path == "seed" => Value::from(u64::MAX),
        FieldKind::Integer if path == "n_years" => Value::from(u32::MAX),
        FieldKind::Integer => Value::from(i32::MAX),
        FieldKind::Number => Value::from(1e300),
        FieldKind::Text => return None,
    };
    set(&mut probe, path, far);
    match Scenario::from_json(&probe.to_string()) {
        Err(ScenarioError::OutOfRange {
            field,
            min,
            max,
            unit,
            ..
        }) if field == path => Some((min, max, unit.to_string())),
        _ => None,
    }
}

/// Every form field with its default, range and unit.
pub fn scenario_schema() -> Vec<FieldSchema> {
    let defaults: Value =
        serde_json::from_str(&Scenario::default().to_json()).unwrap_or(Value::Null);
    FIELDS
        .iter()
        .map(|&(path, group, label, kind, optional, help)| {
            let range = probe_range(&defaults, path, kind);
            FieldSchema {
                path: path.to_string(),
                group,
                label,
                help,
                kind,
                optional,
                default: get(&defaults, path).cloned().unwrap_or(Value::Null),
                min: range.as_ref().map(|r| r.0),
                max: range.as_ref().map(|r| r.1),
                unit: range.map(|r| r.2).unwrap_or_default(),
            }
        })
        .collect()
}

/// A scenario the engine refuses: the field it names (when it names one) and the message.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ScenarioProblem {
    pub field: Option<String>,
    pub message: String,
}

/// Checks scenario JSON with the engine's own parser and validation.
pub fn check_scenario(json: &str) -> Option<ScenarioProblem> {
    let error = Scenario::from_json(json).err()?;
    let field = match &error {
        ScenarioError::OutOfRange { field, .. } | ScenarioError::Invalid { field, .. } => {
            Some(field.clone())
        }
        _ => None,
    };
    Some(ScenarioProblem {
        field,
        message: error.to_string(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_numeric_field_gets_its_range_and_a_default() {
        for field in scenario_schema() {
            if field.kind == FieldKind::Text {
                continue;
            }
            let (min, max) = (field.min.expect(&field.path), field.max.expect(&field.path));
            assert!(min < max, "{}", field.path);
            if !field.optional {
                let default = field.default.as_f64().expect(&field.path);
                assert!((min..=max).contains(&default), "{}", field.path);
            }
        }
    }

    #[test]
    fn ranges_are_the_engines() {
        let schema = scenario_schema();
        let ela = schema
            .iter()
            .find(|f| f.path == "mass_balance.ela_m")
            .unwrap();
        assert_eq!(
            (ela.min, ela.max, ela.unit.as_str()),
            (Some(0.0), Some(7000.0), "m")
        );
        let problem = check_scenario(r#"{"version": 1, "mass_balance": {"ela_m": -5}}"#).unwrap();
        assert_eq!(problem.field.as_deref(), Some("mass_balance.ela_m"));
        assert!(check_scenario(r#"{"version": 1}"#).is_none());
    }
}
