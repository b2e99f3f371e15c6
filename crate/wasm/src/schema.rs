//! The scenario form's schema: which fields the page shows, in which group, with a one-line
//! explanation. Defaults come from `Scenario::default()` and every range and unit is read from
//! the engine's own validation (each field is set far out of range and the engine's
//! `OutOfRange` error names the range), so the page never repeats a number by hand.
//!
//! Plant-type traits are columns of one table: their paths read `vegetation.types[].trait`,
//! their default is the list of each default type's value, and their range is probed on the
//! first type.

use forefield_engine::ice::mass_balance::DomainRule;
use forefield_engine::plants::kernels::KernelFamily;
use forefield_engine::plants::pft::GrowthForm;
use forefield_engine::plants::vegetation::SeedEdge;
use forefield_engine::run::scenario::{Scenario, ScenarioError};
use serde::Serialize;
use serde_json::Value;

/// How a field is entered.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FieldKind {
    Number,
    Integer,
    Text,
    /// One of `options`.
    Choice,
    /// Yes or no.
    Boolean,
}

/// One value a choice field offers.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ChoiceOption {
    /// As written in the scenario JSON.
    pub value: Value,
    pub label: &'static str,
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
    /// The range in words, where its numbers would not read well (the seed's 2^53 - 1).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub range_words: Option<&'static str>,
    /// The values a choice field offers, in display order.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub options: Vec<ChoiceOption>,
}

/// Groups in display order; the page opens "run" and "climate" and folds the rest.
pub const GROUPS: [(&str, &str); 6] = [
    ("run", "Run"),
    ("climate", "Climate"),
    ("ice", "Ice"),
    ("plants", "Plants"),
    ("soil", "Soil and stages"),
    ("advanced", "Advanced: numerics and flow-law constants"),
];

/// A unit as the page writes it: temperatures and their differences in °C, one style.
pub fn display_unit(unit: &str) -> String {
    match unit {
        "C/decade" => "°C per decade",
        "K" | "C" | "degrees C" => "°C",
        "m/K" => "m per °C",
        "K per km" => "°C per km",
        "kg/m3" => "kg per m³",
        "Pa^-3 m2 s^-1" => "Pa⁻³ m² s⁻¹",
        "Pa^-3 s^-1" => "Pa⁻³ s⁻¹",
        "seeds per m2 per year" => "seeds per m² per year",
        other => other,
    }
    .to_string()
}

fn range_words(path: &str) -> Option<&'static str> {
    (path == "seed").then_some("any whole number from 0 up to 2^53 − 1")
}

/// Marks a per-type path: `vegetation.types[].trait`.
pub const PER_TYPE: &str = "vegetation.types[].";

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
        "Same seed, same numbers: change it to see another random outcome. Any whole number from 0 up to 2^53 − 1.",
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
        "Half the swing of a solar-variability sinusoid (period about 11 years); the size is your choice, 0 turns it off.",
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
        "relaxation_years",
        "run",
        "Start-up relaxation",
        FieldKind::Integer,
        false,
        "Years the ice settles at the start climate before the run; the given thickness is seldom in balance with the flow.",
    ),
    (
        "mass_balance.ela_m",
        "ice",
        "Equilibrium-line altitude",
        FieldKind::Number,
        true,
        "Height where yearly snow gain equals melt, before warming; empty calibrates it on the starting glacier.",
    ),
    (
        "mass_balance.calibration_target_mwe_per_a",
        "ice",
        "Calibrate to mean balance",
        FieldKind::Number,
        true,
        "Glacier-wide mean balance on the starting glacier (e.g. a measured rate), in metres of water equivalent (m w.e.: the depth of water the ice gained or lost would make) per year; empty with the two fields around it means 0, a glacier in balance.",
    ),
    (
        "mass_balance.balanced_aar",
        "ice",
        "Or calibrate to an accumulation-area ratio",
        FieldKind::Number,
        true,
        "Share of the starting glacier above the equilibrium line; 0.58 for glaciers in balance (Dyurgerov et al. 2009).",
    ),
    (
        "mass_balance.domain",
        "ice",
        "Glacier domain",
        FieldKind::Choice,
        false,
        "Where snow may build ice: the glacier, the ground touching it and the ground draining into them, or the whole grid.",
    ),
    (
        "mass_balance.snow_redistribution",
        "ice",
        "Snow slides off steep ground",
        FieldKind::Boolean,
        false,
        "Snow on slopes steeper than the limit slides down to where it can lie (Gruber 2007).",
    ),
    (
        "mass_balance.snow_limit_slope_deg",
        "ice",
        "Snow limit slope",
        FieldKind::Number,
        false,
        "No snow stays on slopes this steep or steeper.",
    ),
    (
        "mass_balance.snow_holding_depth_mwe",
        "ice",
        "Snow a level cell keeps",
        FieldKind::Number,
        false,
        "Most snow a level cell keeps in a year, as water equivalent; less on steeper ground.",
    ),
    (
        "mass_balance.ela_sensitivity_m_per_k",
        "ice",
        "ELA rise with warming",
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
        "advanced",
        "Ice softness (Glen's A)",
        FieldKind::Number,
        false,
        "The rate factor A of Glen's flow law, which sets how easily ice deforms under stress; larger flows faster (warmer ice).",
    ),
    (
        "flow.ice_density_kg_m3",
        "advanced",
        "Ice density",
        FieldKind::Number,
        false,
        "Density of glacier ice.",
    ),
    (
        "flow.sliding_pa3_m2_s",
        "advanced",
        "Basal sliding",
        FieldKind::Number,
        false,
        "Sliding coefficient; 0 means the ice moves by deformation only.",
    ),
    (
        "flow.ice_cell_size_m",
        "advanced",
        "Ice-grid cell size",
        FieldKind::Number,
        false,
        "Ice flow runs on this coarser grid; finer is slower.",
    ),
    (
        "flow.time_step_fraction",
        "advanced",
        "Time-step fraction",
        FieldKind::Number,
        false,
        "Share of the stability limit used as the ice-flow time step; lower is safer and slower.",
    ),
    (
        "vegetation.growing_season.sea_level_temp_c",
        "plants",
        "Growing season at sea level",
        FieldKind::Number,
        false,
        "Mean growing-season air temperature at sea level before warming.",
    ),
    (
        "vegetation.growing_season.lapse_rate_k_per_km",
        "plants",
        "Lapse rate",
        FieldKind::Number,
        false,
        "Cooling with height; with the sea-level value it sets each type's upper limit.",
    ),
    (
        "vegetation.seed_edge",
        "plants",
        "Seed at the grid edge",
        FieldKind::Choice,
        false,
        "What lies beyond the edge for seed. Mirrored: the land continues as it is inside the edge, so forest cut off by a tight clip still seeds the forefield. Lost: seed leaving the grid is gone and none comes in. Long-distance jumps off the grid are lost either way.",
    ),
    (
        "vegetation.dispersal_cell_size_m",
        "advanced",
        "Dispersal cell size",
        FieldKind::Number,
        false,
        "Finest cell the seed spread runs on; 0 uses the grid's own. Coarser is faster.",
    ),
    (
        "vegetation.soil.rate_per_a",
        "soil",
        "Soil development rate",
        FieldKind::Number,
        false,
        "Yearly rate on flat, average ground at the reference temperature.",
    ),
    (
        "vegetation.soil.reference_temp_c",
        "soil",
        "Soil reference temperature",
        FieldKind::Number,
        false,
        "Growing-season temperature at which soil develops at that rate.",
    ),
    (
        "vegetation.soil.q10",
        "soil",
        "Soil rate per 10 °C (Q10)",
        FieldKind::Number,
        false,
        "Q10: the factor by which the rate grows for 10 °C more warmth (2 doubles it).",
    ),
    (
        "vegetation.soil.slope_half_rate_deg",
        "soil",
        "Slope halving the rate",
        FieldKind::Number,
        false,
        "Steep ground loses fines: at this slope soil develops half as fast.",
    ),
    (
        "vegetation.soil.nitrogen_fixer_boost",
        "soil",
        "Nitrogen-fixer boost",
        FieldKind::Number,
        false,
        "Relative speed-up of soil development under full nitrogen-fixer cover.",
    ),
    (
        "vegetation.soil.moisture_effect",
        "soil",
        "Moisture effect",
        FieldKind::Number,
        false,
        "Relative difference in rate between the driest and the wettest ground.",
    ),
    (
        "vegetation.stages.pioneer_total_cover",
        "soil",
        "Pioneer: total cover",
        FieldKind::Number,
        false,
        "Plant cover from which bare ground counts as pioneer stage.",
    ),
    (
        "vegetation.stages.meadow_total_cover",
        "soil",
        "Meadow: total cover",
        FieldKind::Number,
        false,
        "Plant cover a meadow needs, with the grass and sedge cover below.",
    ),
    (
        "vegetation.stages.meadow_graminoid_cover",
        "soil",
        "Meadow: grass and sedge cover",
        FieldKind::Number,
        false,
        "Cover of graminoids (grasses and sedges) a meadow needs.",
    ),
    (
        "vegetation.stages.shrubland_woody_cover",
        "soil",
        "Shrubland: woody cover",
        FieldKind::Number,
        false,
        "Shrub and tree cover from which a cell counts as shrubland.",
    ),
    (
        "vegetation.stages.young_forest_tree_cover",
        "soil",
        "Young forest: tree cover",
        FieldKind::Number,
        false,
        "Tree cover from which a cell counts as young forest.",
    ),
    (
        "vegetation.stages.mature_forest_tree_cover",
        "soil",
        "Mature forest: tree cover",
        FieldKind::Number,
        false,
        "Tree cover a mature forest needs, with the age below.",
    ),
    (
        "vegetation.stages.mature_forest_age_a",
        "soil",
        "Mature forest: tree age",
        FieldKind::Number,
        false,
        "Years since the oldest tree type present established in the cell.",
    ),
    (
        "vegetation.seed_bank.years_of_seed",
        "soil",
        "Seed bank after a burn",
        FieldKind::Number,
        false,
        "Seed left in the soil per unit of burnt cover, in years of seed rain. Burns come only from a scenario file's disturbances list (Load…); without one this has no effect.",
    ),
    (
        "vegetation.seed_bank.duration_a",
        "soil",
        "Seed bank lasts",
        FieldKind::Number,
        false,
        "Years the bank keeps germinating after a burn; it empties evenly. Only used where a scenario file places a burn.",
    ),
];

/// Plant-type traits in column order: (trait, label, kind, explanation).
const PLANT_TRAITS: &[(&str, &str, FieldKind, &str)] = &[
    (
        "name",
        "Type",
        FieldKind::Text,
        "Name shown in layers, charts and exports.",
    ),
    (
        "growth_form",
        "Growth form",
        FieldKind::Choice,
        "Which succession stage the type's cover counts towards.",
    ),
    (
        "kernel",
        "Dispersal kernel",
        FieldKind::Choice,
        "Shape of the seed-distance curve; 2Dt (a Student-t-like curve) has the fattest tail, so more seed goes far.",
    ),
    (
        "mean_dispersal_m",
        "Mean dispersal",
        FieldKind::Number,
        "Mean distance local seed travels from the parent plant.",
    ),
    (
        "kernel_shape_p",
        "2Dt shape p",
        FieldKind::Number,
        "Tail of the 2Dt kernel: smaller is fatter. Other kernels ignore it.",
    ),
    (
        "long_distance_share",
        "Long-distance share",
        FieldKind::Number,
        "Share of seed carried on rare long-distance events (storms, birds).",
    ),
    (
        "long_distance_mean_m",
        "Long-distance mean",
        FieldKind::Number,
        "Mean distance of those long-distance events.",
    ),
    (
        "age_first_seed_a",
        "Age at first seed",
        FieldKind::Number,
        "Years from establishment in a cell to its first seed.",
    ),
    (
        "fecundity_per_m2_a",
        "Fecundity",
        FieldKind::Number,
        "Viable seeds per square metre of fertile cover per year.",
    ),
    (
        "establishment_per_seed",
        "Establishment per seed",
        FieldKind::Number,
        "Share of seeds on free, suitable ground that become a recruit.",
    ),
    (
        "recruit_cover",
        "Recruit cover",
        FieldKind::Number,
        "Cover fraction a cell gains from one year's recruits when first colonised.",
    ),
    (
        "min_soil_index",
        "Minimum soil index",
        FieldKind::Number,
        "Soil development needed to establish: 0 raw till (the unsorted rock debris a glacier leaves), 1 mature soil.",
    ),
    (
        "min_growing_season_temp_c",
        "Minimum growing-season temperature",
        FieldKind::Number,
        "Growing-season warmth needed to establish and grow: the type's upper limit.",
    ),
    (
        "max_slope_deg",
        "Maximum slope",
        FieldKind::Number,
        "Steepest ground the type grows on.",
    ),
    (
        "growth_rate_per_a",
        "Growth rate",
        FieldKind::Number,
        "Yearly rate of cover increase of the logistic growth.",
    ),
    (
        "max_cover",
        "Maximum cover",
        FieldKind::Number,
        "Largest cover fraction the type reaches alone in a cell.",
    ),
    (
        "height_class",
        "Height class",
        FieldKind::Integer,
        "Canopy layer: a higher class shades every lower one.",
    ),
    (
        "shade_tolerance",
        "Shade tolerance",
        FieldKind::Number,
        "0 grows only in full light; 1 is unaffected by taller types' shade.",
    ),
    (
        "mortality_per_a",
        "Mortality",
        FieldKind::Number,
        "Share of cover lost each year; must stay below the growth rate.",
    ),
    (
        "nitrogen_fixer",
        "Nitrogen fixer",
        FieldKind::Boolean,
        "Speeds soil development where the type grows.",
    ),
];

fn kernel_label(kernel: KernelFamily) -> &'static str {
    match kernel {
        KernelFamily::NegativeExponential => "negative exponential",
        KernelFamily::Gaussian => "Gaussian",
        KernelFamily::TwoDt => "2Dt (fat-tailed)",
    }
}

fn growth_form_label(form: GrowthForm) -> &'static str {
    match form {
        GrowthForm::PioneerHerb => "pioneer herb",
        GrowthForm::Graminoid => "graminoid (grass or sedge)",
        GrowthForm::Shrub => "shrub",
        GrowthForm::Tree => "tree",
    }
}

/// The values of a choice field outside the plant table.
fn field_options(path: &str) -> Vec<ChoiceOption> {
    match path {
        "mass_balance.domain" => options([
            (
                DomainRule::Drainage,
                "glacier and the ground touching or draining into it",
            ),
            (DomainRule::WholeGrid, "whole grid"),
        ]),
        "vegetation.seed_edge" => options([
            (
                SeedEdge::Mirrored,
                "mirrored: the land continues beyond the edge",
            ),
            (SeedEdge::Lost, "lost: nothing beyond the edge"),
        ]),
        _ => Vec::new(),
    }
}

/// Choice options from engine values, written as the scenario JSON writes them.
fn options<T: Serialize>(values: impl IntoIterator<Item = (T, &'static str)>) -> Vec<ChoiceOption> {
    values
        .into_iter()
        .map(|(value, label)| ChoiceOption {
            value: serde_json::to_value(value).unwrap_or(Value::Null),
            label,
        })
        .collect()
}

/// The values of a choice trait, written as the engine reads them.
fn choice_options(trait_name: &str) -> Vec<ChoiceOption> {
    // Serialising a unit enum variant cannot fail.
    let option = |value: Result<Value, serde_json::Error>, label| ChoiceOption {
        value: value.unwrap_or(Value::Null),
        label,
    };
    match trait_name {
        "kernel" => [
            KernelFamily::NegativeExponential,
            KernelFamily::Gaussian,
            KernelFamily::TwoDt,
        ]
        .into_iter()
        .map(|k| option(serde_json::to_value(k), kernel_label(k)))
        .collect(),
        "growth_form" => [
            GrowthForm::PioneerHerb,
            GrowthForm::Graminoid,
            GrowthForm::Shrub,
            GrowthForm::Tree,
        ]
        .into_iter()
        .map(|f| option(serde_json::to_value(f), growth_form_label(f)))
        .collect(),
        _ => Vec::new(),
    }
}

/// Path keys, with `types[3]` read as the key `types` then the index 3.
fn keys(path: &str) -> impl Iterator<Item = Key<'_>> {
    path.split('.').flat_map(|part| match part.split_once('[') {
        Some((name, index)) => {
            let index = index.trim_end_matches(']').parse().unwrap_or(0);
            vec![Key::Name(name), Key::Index(index)]
        }
        None => vec![Key::Name(part)],
    })
}

enum Key<'a> {
    Name(&'a str),
    Index(usize),
}

fn get<'a>(value: &'a Value, path: &str) -> Option<&'a Value> {
    keys(path).try_fold(value, |v, key| match key {
        Key::Name(name) => v.get(name),
        Key::Index(index) => v.get(index),
    })
}

/// Sets the value at `path`, adding missing object keys; a missing list entry sets nothing.
fn set(value: &mut Value, path: &str, new: Value) {
    let mut target = value;
    for key in keys(path) {
        target = match key {
            Key::Name(name) => &mut target[name],
            Key::Index(index) => match target.get_mut(index) {
                Some(entry) => entry,
                None => return,
            },
        };
    }
    *target = new;
}

/// The range and unit the engine states for a numeric field, by asking it to validate a
/// value no range admits.
fn probe_range(defaults: &Value, path: &str, kind: FieldKind) -> Option<(f64, f64, String)> {
    let mut probe = defaults.clone();
    let far = match kind {
        FieldKind::Integer if path == "seed" => Value::from(u64::MAX),
        FieldKind::Integer if path == "n_years" => Value::from(u32::MAX),
        // The height class is a byte.
        FieldKind::Integer if path.ends_with(".height_class") => Value::from(u8::MAX),
        FieldKind::Integer => Value::from(i32::MAX),
        FieldKind::Number => Value::from(1e300),
        FieldKind::Text | FieldKind::Choice | FieldKind::Boolean => return None,
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

/// Every form field with its default, range and unit, the plant-type table's columns last.
pub fn scenario_schema() -> Vec<FieldSchema> {
    let defaults: Value =
        serde_json::from_str(&Scenario::default().to_json()).unwrap_or(Value::Null);
    let fields = FIELDS
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
                unit: range.map(|r| display_unit(&r.2)).unwrap_or_default(),
                range_words: range_words(path),
                options: field_options(path),
            }
        });
    let default_types = get(&defaults, "vegetation.types")
        .and_then(Value::as_array)
        .cloned()
        .unwrap_or_default();
    let traits = PLANT_TRAITS.iter().map(|&(name, label, kind, help)| {
        let range = probe_range(&defaults, &format!("vegetation.types[0].{name}"), kind);
        FieldSchema {
            path: format!("{PER_TYPE}{name}"),
            group: "plants",
            label,
            help,
            kind,
            optional: false,
            default: Value::Array(
                default_types
                    .iter()
                    .map(|t| t.get(name).cloned().unwrap_or(Value::Null))
                    .collect(),
            ),
            min: range.as_ref().map(|r| r.0),
            max: range.as_ref().map(|r| r.1),
            unit: range.map(|r| display_unit(&r.2)).unwrap_or_default(),
            range_words: None,
            options: choice_options(name),
        }
    });
    fields.chain(traits).collect()
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
    let (field, message) = match &error {
        // Said again in the page's units and words.
        ScenarioError::OutOfRange {
            field,
            value,
            min,
            max,
            unit,
        } => {
            let range = range_words(field)
                .map(str::to_string)
                .unwrap_or_else(|| format!("{min} to {max} {}", display_unit(unit)));
            (
                Some(field.clone()),
                format!(
                    "{field} = {value} is outside the valid range, {}",
                    range.trim_end()
                ),
            )
        }
        ScenarioError::Invalid { field, .. } => (Some(field.clone()), error.to_string()),
        _ => (None, error.to_string()),
    };
    Some(ScenarioProblem { field, message })
}

#[cfg(test)]
mod tests {
    use super::*;
    use forefield_engine::plants::pft::PlantType;

    #[test]
    fn every_numeric_field_gets_its_range_and_a_default() {
        for field in scenario_schema() {
            if !matches!(field.kind, FieldKind::Number | FieldKind::Integer) {
                continue;
            }
            let (min, max) = (field.min.expect(&field.path), field.max.expect(&field.path));
            assert!(min < max, "{}", field.path);
            if field.optional {
                continue;
            }
            let defaults = match &field.default {
                Value::Array(values) => values.clone(),
                value => vec![value.clone()],
            };
            assert!(!defaults.is_empty(), "{}", field.path);
            for default in defaults {
                let default = default.as_f64().expect(&field.path);
                assert!((min..=max).contains(&default), "{}", field.path);
            }
        }
    }

    #[test]
    fn every_vegetation_number_outside_the_table_has_a_field() {
        fn leaves(prefix: &str, value: &Value, out: &mut Vec<String>) {
            match value {
                Value::Object(map) => {
                    for (key, inner) in map {
                        if key != "types" {
                            leaves(&format!("{prefix}.{key}"), inner, out);
                        }
                    }
                }
                _ => out.push(prefix.to_string()),
            }
        }
        let defaults = serde_json::to_value(Scenario::default().vegetation).unwrap();
        let mut paths = Vec::new();
        leaves("vegetation", &defaults, &mut paths);
        let schema = scenario_schema();
        for path in paths {
            assert!(schema.iter().any(|f| f.path == path), "{path} has no field");
        }
    }

    #[test]
    fn the_plant_table_has_every_trait_with_the_engines_ranges() {
        let schema = scenario_schema();
        let columns: Vec<&str> = schema
            .iter()
            .filter_map(|f| f.path.strip_prefix(PER_TYPE))
            .collect();
        let type_json = serde_json::to_value(PlantType::conifers()).unwrap();
        let mut traits: Vec<&str> = type_json
            .as_object()
            .unwrap()
            .keys()
            .map(String::as_str)
            .collect();
        let mut sorted_columns = columns.clone();
        sorted_columns.sort_unstable();
        traits.sort_unstable();
        assert_eq!(sorted_columns, traits);
        assert_eq!(columns[0], "name");

        let column = |name: &str| {
            schema
                .iter()
                .find(|f| f.path == format!("{PER_TYPE}{name}"))
                .unwrap()
        };
        let dispersal = column("mean_dispersal_m");
        assert_eq!(
            (dispersal.min, dispersal.max, dispersal.unit.as_str()),
            (Some(1.0), Some(5000.0), "m")
        );
        let height = column("height_class");
        assert_eq!((height.min, height.max), (Some(1.0), Some(10.0)));
        let defaults = PlantType::defaults();
        assert_eq!(
            dispersal.default,
            serde_json::json!(defaults
                .iter()
                .map(|t| t.mean_dispersal_m)
                .collect::<Vec<_>>())
        );
        // Every default's choice is among the options offered.
        for name in ["kernel", "growth_form"] {
            let field = column(name);
            for default in field.default.as_array().unwrap() {
                assert!(
                    field.options.iter().any(|o| &o.value == default),
                    "{name} {default}"
                );
            }
        }
        let problem = check_scenario(
            r#"{"version": 1, "vegetation": {"types": [{"name": "x", "growth_form": "tree",
            "kernel": "gaussian", "mean_dispersal_m": 9000, "kernel_shape_p": 1,
            "long_distance_share": 0, "long_distance_mean_m": 100, "age_first_seed_a": 5,
            "fecundity_per_m2_a": 10, "establishment_per_seed": 0.1, "recruit_cover": 0.01,
            "min_soil_index": 0, "min_growing_season_temp_c": 5, "max_slope_deg": 30,
            "growth_rate_per_a": 0.1, "max_cover": 0.5, "height_class": 2,
            "shade_tolerance": 0.5, "mortality_per_a": 0.01, "nitrogen_fixer": false}]}}"#,
        )
        .unwrap();
        assert_eq!(
            problem.field.as_deref(),
            Some("vegetation.types[0].mean_dispersal_m")
        );
    }

    #[test]
    fn temperatures_read_in_one_style() {
        for field in scenario_schema() {
            let words: Vec<&str> = field.unit.split(' ').collect();
            assert!(
                !words
                    .iter()
                    .any(|w| ["C", "K", "C/decade", "m/K"].contains(w)),
                "{}: {}",
                field.path,
                field.unit
            );
        }
        let problem =
            check_scenario(r#"{"version": 1, "climate": {"warming_c_per_decade": 9}}"#).unwrap();
        assert!(
            problem.message.ends_with("-2 to 2 °C per decade"),
            "{}",
            problem.message
        );
        let seed = check_scenario(r#"{"version": 1, "seed": 9007199254740993}"#).unwrap();
        assert!(
            seed.message.contains("any whole number"),
            "{}",
            seed.message
        );
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
