//! Parameter checks shared by every model: one range check and the scenario's error type.
//!
//! Each model states its parameters' ranges beside their defaults and checks them with
//! [`check_range`], so validation, the page's form and the command line read the same limits.

use thiserror::Error;

/// A bad scenario: the message names the field, the value and what is allowed.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ScenarioError {
    #[error("scenario is not valid JSON for this layout: {0}")]
    Json(String),
    #[error("scenario version {found} is not supported; this engine reads version {supported}")]
    Version { found: String, supported: u32 },
    #[error("{field} = {value} is outside the valid range {min} to {max} {unit}")]
    OutOfRange {
        field: String,
        value: f64,
        min: f64,
        max: f64,
        unit: &'static str,
    },
    #[error("{field}: {problem}")]
    Invalid { field: String, problem: String },
}

/// Checks that `value` is finite and inside `[min, max]`.
pub fn check_range(
    field: &str,
    value: f64,
    min: f64,
    max: f64,
    unit: &'static str,
) -> Result<(), ScenarioError> {
    if value.is_finite() && value >= min && value <= max {
        Ok(())
    } else {
        Err(ScenarioError::OutOfRange {
            field: field.to_string(),
            value,
            min,
            max,
            unit,
        })
    }
}
