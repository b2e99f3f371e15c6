//! Soil development index in [0, 1]: a first-order approach to a mature soil,
//! dS/dt = k (1 - S), after the fast early change of forefield soils with surface age (Crocker
//! & Major 1955, J. Ecol. 43(2):427-448) and O horizons within 38 years on moraines (Burt &
//! Alexander 1996, Geoderma).
//!
//! The rate k is faster on gentle, warm and wet ground and under nitrogen fixers, whose
//! litter drives the early rise of soil organic matter and nitrogen (Chapin, Walker, Fastie &
//! Sharman 1994, Ecol. Monogr. 64(2):149-175). The temperature response is a Q10 of 2 (common
//! practice, no source). The index is kept through burns; debris flows and ice reset it.

use serde::{Deserialize, Serialize};

use crate::plants::pft::{check_range, VegetationError};

/// Soil development parameters.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct SoilParams {
    /// Rate on flat, average-moisture ground at the reference temperature, per year
    /// (0.001 to 0.5). 0.02 gives S = 0.5 after 35 years, the age at which Crocker & Major
    /// (1955) saw pH fall under alder and Burt & Alexander (1996) found O horizons.
    pub rate_per_a: f64,
    /// Growing-season temperature at which the rate is `rate_per_a`, degrees C (-10 to 30).
    pub reference_temp_c: f64,
    /// Factor per 10 K of growing-season temperature (1 to 4).
    pub q10: f64,
    /// Slope at which the rate halves, degrees (5 to 90): steep ground loses fines.
    pub slope_half_rate_deg: f64,
    /// Relative increase of the rate under full nitrogen-fixer cover (0 to 10).
    pub nitrogen_fixer_boost: f64,
    /// Relative change of the rate between the driest and wettest ground (0 to 1.9).
    pub moisture_effect: f64,
}

impl Default for SoilParams {
    fn default() -> Self {
        SoilParams {
            rate_per_a: 0.02,
            reference_temp_c: 7.0,
            q10: 2.0,
            slope_half_rate_deg: 30.0,
            nitrogen_fixer_boost: 1.0,
            moisture_effect: 1.0,
        }
    }
}

impl SoilParams {
    pub fn validate(&self) -> Result<(), VegetationError> {
        check_range("soil.rate_per_a", self.rate_per_a, 0.001, 0.5, "per year")?;
        check_range(
            "soil.reference_temp_c",
            self.reference_temp_c,
            -10.0,
            30.0,
            "degrees C",
        )?;
        check_range("soil.q10", self.q10, 1.0, 4.0, "")?;
        check_range(
            "soil.slope_half_rate_deg",
            self.slope_half_rate_deg,
            5.0,
            90.0,
            "degrees",
        )?;
        check_range(
            "soil.nitrogen_fixer_boost",
            self.nitrogen_fixer_boost,
            0.0,
            10.0,
            "",
        )?;
        check_range("soil.moisture_effect", self.moisture_effect, 0.0, 1.9, "")?;
        Ok(())
    }

    /// Site part of the rate (per year): slope and a moisture proxy in [0, 1] (0.5 average).
    pub fn site_rate_per_a(&self, slope_deg: f32, moisture: f32) -> f32 {
        let slope = f64::from(slope_deg.max(0.0)) / self.slope_half_rate_deg;
        let wet = 1.0 + self.moisture_effect * (f64::from(moisture.clamp(0.0, 1.0)) - 0.5);
        (self.rate_per_a * wet / (1.0 + slope * slope)) as f32
    }

    /// Temperature factor of the rate.
    pub fn temperature_factor(&self, growing_season_temp_c: f32) -> f32 {
        libm::powf(
            self.q10 as f32,
            (growing_season_temp_c - self.reference_temp_c as f32) / 10.0,
        )
    }
}

/// One year of soil development.
#[inline]
pub fn develop(soil: f32, site_rate_per_a: f32, temperature_factor: f32, fixer_boost: f32) -> f32 {
    // A comparison rather than `f32::min`, which does not vectorise on wasm.
    let k = site_rate_per_a * temperature_factor * fixer_boost;
    let k = if k < 1.0 { k } else { 1.0 };
    soil + k * (1.0 - soil)
}

/// Moisture proxy in [0, 1] from local concavity: water gathers in hollows and leaves
/// convex ground (common practice, no source). 0.5 on planar ground; a hollow 2 m below
/// the mean of its four neighbours, relative to cell size 25 m, reads about 1.
pub fn moisture_proxy(
    elevation_m: &[f32],
    n_cols: usize,
    n_rows: usize,
    cell_size_m: f64,
) -> Vec<f32> {
    let scale = (cell_size_m / 25.0) as f32;
    let mut moisture = vec![0.5f32; elevation_m.len()];
    for row in 1..n_rows.saturating_sub(1) {
        for col in 1..n_cols - 1 {
            let i = row * n_cols + col;
            let z = elevation_m[i];
            let mean = 0.25
                * (elevation_m[i - 1]
                    + elevation_m[i + 1]
                    + elevation_m[i - n_cols]
                    + elevation_m[i + n_cols]);
            let hollow = (mean - z) / scale;
            if hollow.is_finite() {
                moisture[i] = (0.5 + 0.25 * hollow).clamp(0.0, 1.0);
            }
        }
    }
    moisture
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn half_developed_after_about_35_years_on_flat_ground() {
        let p = SoilParams::default();
        let site = p.site_rate_per_a(0.0, 0.5);
        let mut s = 0.0;
        for _ in 0..35 {
            s = develop(s, site, p.temperature_factor(7.0), 1.0);
        }
        assert!((s - 0.5).abs() < 0.02, "{s}");
    }

    #[test]
    fn steep_cold_ground_develops_slower() {
        let p = SoilParams::default();
        assert!(p.site_rate_per_a(35.0, 0.5) < p.site_rate_per_a(5.0, 0.5));
        assert!(p.temperature_factor(3.0) < p.temperature_factor(9.0));
    }
}
