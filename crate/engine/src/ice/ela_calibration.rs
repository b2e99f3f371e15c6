//! The ELA a planner need not guess: calibrated on the starting glacier so that the
//! glacier-wide mean balance equals a stated rate (a geodetic or measured mass balance for the
//! glacier or its region), or zero when none is given (a glacier in balance with the start
//! climate); found by bisection, the mean balance falling monotonically as the ELA rises.
//! Offered too: the elevation where the glacier's accumulation-area ratio equals that of
//! glaciers in balance, AAR0 = 0.58 (Dyurgerov, Meier & Bahr 2009, J. Glaciol. 55(192); value
//! from memory). Measured AARs come from balance profiles steeper below the ELA than above;
//! with one linear gradient a uniform hypsometry is balanced at AAR 0.5 and AAR 0.58 gives a
//! positive balance [C], which is why it is not the default. A calibration is only as good as
//! the rate it is given.

use thiserror::Error;

/// How the ELA of a run was set.
#[derive(Clone, Debug, PartialEq)]
pub enum ElaMethod {
    /// Given in the scenario.
    Fixed,
    /// The accumulation-area ratio of the starting glacier equals `ratio`.
    AccumulationAreaRatio { ratio: f64 },
    /// The starting glacier's mean balance equals `target_mwe_per_a`.
    MeanBalance { target_mwe_per_a: f64 },
    /// No starting ice to calibrate on: the ELA sits at the highest ground, so no ice forms.
    NoGlacier,
}

/// The ELA at zero anomaly a run uses, and how it was found.
#[derive(Clone, Debug, PartialEq)]
pub struct ElaCalibration {
    /// ELA at zero anomaly, m.
    pub ela0_m: f64,
    /// ELA in the start year's climate, m (the calibrated value).
    pub start_ela_m: f64,
    pub method: ElaMethod,
    /// Glacier-wide mean balance of the starting glacier at this ELA, m w.e. per year.
    pub mean_balance_mwe_per_a: Option<f64>,
}

impl ElaCalibration {
    /// One line for the run status, the summary CSV and export provenance.
    pub fn describe(&self) -> String {
        let how = match &self.method {
            ElaMethod::Fixed => "given in the scenario".to_string(),
            ElaMethod::AccumulationAreaRatio { ratio } => {
                format!("calibrated: accumulation-area ratio {ratio:.2} on the starting glacier")
            }
            ElaMethod::MeanBalance { target_mwe_per_a } => format!(
                "calibrated to a mean balance of {target_mwe_per_a:+.2} m w.e./a on the starting \
                 glacier"
            ),
            ElaMethod::NoGlacier => {
                "no starting ice to calibrate on; placed at the highest ground".to_string()
            }
        };
        let balance = match (&self.method, self.mean_balance_mwe_per_a) {
            (ElaMethod::Fixed | ElaMethod::AccumulationAreaRatio { .. }, Some(b)) => {
                format!("; mean balance {b:+.2} m w.e./a on the starting glacier")
            }
            _ => String::new(),
        };
        format!(
            "ELA {:.1} m in the start year ({how}){balance}",
            self.start_ela_m
        )
    }
}

/// The calibration could not be done.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum CalibrationError {
    #[error(
        "mass_balance.calibration_target_mwe_per_a = {target:.3} m w.e./a cannot be reached on \
         the starting glacier: its mean balance lies between {lowest:.3} and {highest:.3} m w.e./a \
         for any ELA; check the target and the balance gradients"
    )]
    Unreachable {
        target: f64,
        lowest: f64,
        highest: f64,
    },
    #[error(
        "a glacier domain is given but there is no starting ice to calibrate the ELA on; \
         set mass_balance.ela_m"
    )]
    NothingToCalibrate,
}

/// Elevation above which `ratio` of the glacier area lies: each cell (equal areas) covers a
/// slice of the cumulative area, counted from the top, and the elevation is interpolated
/// linearly between the slices' centres. `None` for an empty glacier. Sorts `surfaces_m`.
pub fn aar_ela_m(surfaces_m: &mut [f64], ratio: f64) -> Option<f64> {
    let n = surfaces_m.len();
    if n == 0 {
        return None;
    }
    surfaces_m.sort_unstable_by(|a, b| b.total_cmp(a));
    let position = ratio * n as f64 - 0.5;
    if position <= 0.0 {
        return Some(surfaces_m[0]);
    }
    if position >= (n - 1) as f64 {
        return Some(surfaces_m[n - 1]);
    }
    let i = position.floor() as usize;
    let t = position - i as f64;
    Some(surfaces_m[i] + t * (surfaces_m[i + 1] - surfaces_m[i]))
}

/// The ELA at which `mean_balance_mwe(ela)` (non-increasing in the ELA) equals `target`,
/// searched between `low_m` and `high_m` by bisection to 1 mm.
pub fn ela_for_mean_balance(
    target_mwe_per_a: f64,
    low_m: f64,
    high_m: f64,
    mut mean_balance_mwe: impl FnMut(f64) -> f64,
) -> Result<f64, CalibrationError> {
    let (highest, lowest) = (mean_balance_mwe(low_m), mean_balance_mwe(high_m));
    if !(target_mwe_per_a <= highest && target_mwe_per_a >= lowest) {
        return Err(CalibrationError::Unreachable {
            target: target_mwe_per_a,
            lowest,
            highest,
        });
    }
    let (mut lo, mut hi) = (low_m, high_m);
    while hi - lo > 1e-3 {
        let mid = 0.5 * (lo + hi);
        if mean_balance_mwe(mid) > target_mwe_per_a {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Ok(0.5 * (lo + hi))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn aar_of_a_uniform_hypsometry_is_worked_by_hand() {
        // 100 equal cells, one per 10 m band from 2000 to 3000 m: 58 % of the area lies above
        // 3000 - 0.58 * 1000 = 2420 m.
        let mut z: Vec<f64> = (0..100).map(|i| 2005.0 + 10.0 * i as f64).collect();
        let ela = aar_ela_m(&mut z, 0.58).unwrap();
        assert!((ela - 2420.0).abs() < 1e-9, "{ela}");
        assert_eq!(aar_ela_m(&mut [], 0.58), None);
    }

    #[test]
    fn bisection_finds_a_linear_target_and_refuses_an_unreachable_one() {
        // Mean balance 0.007 (2500 - ELA) m w.e./a, capped at 2.
        let mean = |ela: f64| (0.007 * (2500.0 - ela)).min(2.0);
        let ela = ela_for_mean_balance(-0.7, 1000.0, 5000.0, mean).unwrap();
        assert!((ela - 2600.0).abs() < 1e-3, "{ela}");
        let err = ela_for_mean_balance(3.0, 1000.0, 5000.0, mean).unwrap_err();
        assert!(err.to_string().contains("3.000"), "{err}");
    }
}
