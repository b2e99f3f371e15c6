//! The scenario's defaults, the form's schema and the check before a run.

use super::*;

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
