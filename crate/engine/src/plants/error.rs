//! The plant model's input errors, and its range check (the shared one, in these terms).

use thiserror::Error;

use crate::params::ScenarioError;

/// A bad vegetation input: the message names the field, the value and what is allowed.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum VegetationError {
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
    #[error("{layer} has {found} cells; the grid has {expected}")]
    WrongLength {
        layer: &'static str,
        found: usize,
        expected: usize,
    },
    #[error("{layer} = {value} at row {row}, column {col} is not a valid {what}")]
    BadCell {
        layer: &'static str,
        row: usize,
        col: usize,
        value: f64,
        what: &'static str,
    },
}

/// Checks that `value` is finite and inside `[min, max]`.
pub(crate) fn check_range(
    field: &str,
    value: f64,
    min: f64,
    max: f64,
    unit: &'static str,
) -> Result<(), VegetationError> {
    crate::params::check_range(field, value, min, max, unit).map_err(|e| match e {
        ScenarioError::OutOfRange {
            field,
            value,
            min,
            max,
            unit,
        } => VegetationError::OutOfRange {
            field,
            value,
            min,
            max,
            unit,
        },
        other => VegetationError::Invalid {
            field: field.to_string(),
            problem: other.to_string(),
        },
    })
}
