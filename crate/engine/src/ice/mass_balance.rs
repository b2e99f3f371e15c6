//! Surface mass balance: a linear balance gradient about the equilibrium-line altitude (ELA),
//! capped in the accumulation area, with ELA(t) = ELA0 + sensitivity * dT(t).
//!
//! b(z) = g_abl (z - ELA) below the ELA, b(z) = min(g_acc (z - ELA), b_max) above it. Balance
//! profiles of this form are "remarkably linear" on maritime glaciers (Rasmussen & Andreassen
//! 2005, J. Glaciol. 51(175):601-606); the cap stands in for the limit set by precipitation
//! (common practice, no source).
//!
//! Default ELA sensitivity, 120 m per K: a pure lapse-rate shift gives 1/0.0065 K/m = 154 m/K
//! (ICAO Standard Atmosphere, Doc 7488, 6.5 K/km), an upper bound because warmer air also
//! brings more snowfall; an energy-balance model gives 87.5 m/K (Ambach 1989, J. Glaciol.).
//! 120 m/K lies between the two, near their mean (121 m/K), inside the 90-170 m/K range of
//! the literature (range from memory).
//!
//! The ELA at zero anomaly is either given (`ela_m`) or calibrated on the starting glacier
//! (see `ela_calibration`); the balance adds ice only inside the glacier domain (see
//! `glacier_domain`), and snow falling on steep ground slides to where it can lie (see
//! `snow_redistribution`).

use serde::{Deserialize, Serialize};

use crate::params::{check_range, ScenarioError};

/// Density of water, kg m^-3, for converting metres water equivalent to metres of ice.
pub const WATER_DENSITY_KG_M3: f64 = 1000.0;

/// ELA shift per kelvin from the ISA lapse rate alone, m/K (ICAO Doc 7488: 6.5 K/km).
pub const LAPSE_RATE_ELA_SENSITIVITY_M_PER_K: f64 = 1000.0 / 6.5;

/// ELA shift per kelvin from an energy-balance model (Ambach 1989, J. Glaciol.), m/K.
pub const ENERGY_BALANCE_ELA_SENSITIVITY_M_PER_K: f64 = 87.5;

/// Accumulation-area ratio of a glacier in balance (Dyurgerov, Meier & Bahr 2009, J. Glaciol.
/// 55(192), from a global set of measured balances; value from memory).
pub const BALANCED_AAR: f64 = 0.58;

/// Where the surface balance may add ice.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DomainRule {
    /// The starting ice and the ground whose D8 flow path reaches it.
    Drainage,
    /// Every cell of the grid.
    WholeGrid,
}

/// Parameters of the linear balance profile (the `mass_balance` block of a scenario).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct MassBalanceParams {
    /// Equilibrium-line altitude at zero anomaly, m above sea level, 0 to 7000. Default
    /// `null`: calibrated on the starting glacier (see `calibration_target_mwe_per_a`).
    pub ela_m: Option<f64>,
    /// Glacier-wide mean balance the calibrated ELA gives on the starting glacier, m water
    /// equivalent per year, -5 to 2 (e.g. a measured geodetic rate). With `ela_m`,
    /// `calibration_target_mwe_per_a` and `balanced_aar` all `null` (the default) the target
    /// is 0: a glacier in balance with the start year's climate.
    pub calibration_target_mwe_per_a: Option<f64>,
    /// Calibrate instead so that this share of the starting glacier lies above the ELA,
    /// 0.2 to 0.9; 0.58 is the ratio of glaciers in balance (Dyurgerov, Meier & Bahr 2009,
    /// J. Glaciol. 55(192); value from memory). With this model's linear profile it gives a
    /// positive balance on many glaciers (see the README), so it is an option, not the default.
    pub balanced_aar: Option<f64>,
    /// Where the balance may add ice: `drainage` (default: the starting ice and the ground
    /// draining into it), or `whole_grid` (every cell; ice-free ground above the ELA grows
    /// ice). A domain grid named in `grids.glacier_domain` replaces either.
    pub domain: DomainRule,
    /// Snow falling on steep ground slides down to where it can lie (Gruber 2007). Default on.
    pub snow_redistribution: bool,
    /// Slope at and above which no snow stays, degrees, 10 to 89. Default 50.
    pub snow_limit_slope_deg: f64,
    /// Most snow a level cell keeps in a year, m water equivalent, 0.1 to 20. Default 4;
    /// it falls linearly to zero at the limit slope.
    pub snow_holding_depth_mwe: f64,
    /// ELA rise per degree of warming, m/K, 0 to 300. Default 120 (see the module notes).
    pub ela_sensitivity_m_per_k: f64,
    /// Balance gradient below the ELA, m water equivalent per year per 100 m, 0.01 to 3.
    /// Default 0.7, mid-range for mid-latitude mountain glaciers (0.5-0.9; maritime 0.8-1.5, continental
    /// 0.1-0.4; ranges from memory, pattern as in Braithwaite & Raper 2007, Ann. Glaciol. 46).
    pub gradient_below_ela_mwe_per_100m: f64,
    /// Balance gradient above the ELA, same unit and range; `null` uses the gradient below.
    pub gradient_above_ela_mwe_per_100m: Option<f64>,
    /// Largest accumulation, m water equivalent per year, 0.01 to 10. Default 2.0.
    pub max_accumulation_mwe_per_a: f64,
}

impl Default for MassBalanceParams {
    fn default() -> Self {
        MassBalanceParams {
            ela_m: None,
            calibration_target_mwe_per_a: None,
            balanced_aar: None,
            domain: DomainRule::Drainage,
            snow_redistribution: true,
            snow_limit_slope_deg: 50.0,
            snow_holding_depth_mwe: 4.0,
            ela_sensitivity_m_per_k: 120.0,
            gradient_below_ela_mwe_per_100m: 0.7,
            gradient_above_ela_mwe_per_100m: None,
            max_accumulation_mwe_per_a: 2.0,
        }
    }
}

impl MassBalanceParams {
    /// Checks every number against its documented range.
    pub fn validate(&self) -> Result<(), ScenarioError> {
        if let Some(ela) = self.ela_m {
            check_range("mass_balance.ela_m", ela, 0.0, 7000.0, "m")?;
        }
        if let Some(target) = self.calibration_target_mwe_per_a {
            check_range(
                "mass_balance.calibration_target_mwe_per_a",
                target,
                -5.0,
                2.0,
                "m w.e./a",
            )?;
        }
        if let Some(ratio) = self.balanced_aar {
            check_range("mass_balance.balanced_aar", ratio, 0.2, 0.9, "")?;
        }
        let n_set = usize::from(self.ela_m.is_some())
            + usize::from(self.calibration_target_mwe_per_a.is_some())
            + usize::from(self.balanced_aar.is_some());
        if n_set > 1 {
            return Err(ScenarioError::Invalid {
                field: "mass_balance".to_string(),
                problem: "give at most one of ela_m, calibration_target_mwe_per_a and \
                          balanced_aar"
                    .to_string(),
            });
        }
        check_range(
            "mass_balance.snow_limit_slope_deg",
            self.snow_limit_slope_deg,
            10.0,
            89.0,
            "degrees",
        )?;
        check_range(
            "mass_balance.snow_holding_depth_mwe",
            self.snow_holding_depth_mwe,
            0.1,
            20.0,
            "m w.e.",
        )?;
        check_range(
            "mass_balance.ela_sensitivity_m_per_k",
            self.ela_sensitivity_m_per_k,
            0.0,
            300.0,
            "m/K",
        )?;
        check_range(
            "mass_balance.gradient_below_ela_mwe_per_100m",
            self.gradient_below_ela_mwe_per_100m,
            0.01,
            3.0,
            "m w.e./a per 100 m",
        )?;
        if let Some(gradient) = self.gradient_above_ela_mwe_per_100m {
            check_range(
                "mass_balance.gradient_above_ela_mwe_per_100m",
                gradient,
                0.01,
                3.0,
                "m w.e./a per 100 m",
            )?;
        }
        check_range(
            "mass_balance.max_accumulation_mwe_per_a",
            self.max_accumulation_mwe_per_a,
            0.01,
            10.0,
            "m w.e./a",
        )?;
        Ok(())
    }

    /// ELA for a temperature anomaly, m, from the ELA at zero anomaly `ela0_m`.
    pub fn ela_for_anomaly_m(&self, ela0_m: f64, anomaly_c: f64) -> f64 {
        ela0_m + self.ela_sensitivity_m_per_k * anomaly_c
    }

    /// The balance profile about the ELA `ela_m`, in metres of ice per year.
    pub fn profile_at_ela(&self, ela_m: f64, ice_density_kg_m3: f64) -> LinearBalance {
        let ice_per_we = WATER_DENSITY_KG_M3 / ice_density_kg_m3;
        let below = self.gradient_below_ela_mwe_per_100m / 100.0 * ice_per_we;
        let above = self
            .gradient_above_ela_mwe_per_100m
            .unwrap_or(self.gradient_below_ela_mwe_per_100m)
            / 100.0
            * ice_per_we;
        LinearBalance {
            ela_m,
            gradient_below_per_a: below,
            gradient_above_per_a: above,
            max_accumulation_m_per_a: self.max_accumulation_mwe_per_a * ice_per_we,
        }
    }
}

/// One year's balance profile, in ice equivalent: a plain `Copy` value the flow step
/// evaluates at each cell's surface elevation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LinearBalance {
    /// Equilibrium-line altitude, m.
    pub ela_m: f64,
    /// Balance gradient below the ELA, (m ice / a) per m of elevation.
    pub gradient_below_per_a: f64,
    /// Balance gradient above the ELA, (m ice / a) per m of elevation.
    pub gradient_above_per_a: f64,
    /// Cap on accumulation, m ice / a.
    pub max_accumulation_m_per_a: f64,
}

impl LinearBalance {
    /// No accumulation and no melt anywhere (used by conservation checks).
    pub const ZERO: LinearBalance = LinearBalance {
        ela_m: 0.0,
        gradient_below_per_a: 0.0,
        gradient_above_per_a: 0.0,
        max_accumulation_m_per_a: 0.0,
    };

    /// Ablation (the negative part of the balance) at `surface_m`, m ice per year, <= 0.
    #[inline]
    pub fn ablation_m_per_a(&self, surface_m: f64) -> f64 {
        let dz = surface_m - self.ela_m;
        self.gradient_below_per_a * if dz < 0.0 { dz } else { 0.0 }
    }

    /// Balance rate at surface elevation `surface_m`, metres of ice per year.
    #[inline]
    pub fn rate_m_per_a(&self, surface_m: f64) -> f64 {
        let dz = surface_m - self.ela_m;
        // Compare-and-select rather than f64::min/max, whose NaN rule keeps wasm loops scalar;
        // either way the inner loop has no data-dependent branch.
        let below = self.gradient_below_per_a * if dz < 0.0 { dz } else { 0.0 };
        let above_uncapped = self.gradient_above_per_a * if dz > 0.0 { dz } else { 0.0 };
        let cap = self.max_accumulation_m_per_a;
        below
            + if above_uncapped < cap {
                above_uncapped
            } else {
                cap
            }
    }

    /// Elevation where the balance is zero, m (the ELA itself, kept as a check of the profile).
    pub fn zero_balance_altitude_m(&self, low_m: f64, high_m: f64) -> Option<f64> {
        let (mut lo, mut hi) = (low_m, high_m);
        if self.rate_m_per_a(lo) > 0.0 || self.rate_m_per_a(hi) < 0.0 {
            return None;
        }
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if self.rate_m_per_a(mid) < 0.0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        Some(0.5 * (lo + hi))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn profile_is_linear_capped_and_monotonic() {
        let params = MassBalanceParams {
            gradient_above_ela_mwe_per_100m: Some(0.35),
            ..Default::default()
        };
        let b = params.profile_at_ela(2900.0, 910.0);
        // 0.7 m w.e. per 100 m below the ELA, in ice: 0.7 * 1000/910 per 100 m.
        let expected = -3.0 * 0.7 * 1000.0 / 910.0;
        assert!((b.rate_m_per_a(2600.0) - expected).abs() < 1e-12);
        assert!((b.rate_m_per_a(3000.0) - 0.35 * 1000.0 / 910.0).abs() < 1e-12);
        assert!((b.rate_m_per_a(5000.0) - 2.0 * 1000.0 / 910.0).abs() < 1e-12);
        let mut previous = f64::NEG_INFINITY;
        for z in (0..6000).step_by(10) {
            let rate = b.rate_m_per_a(z as f64);
            assert!(rate >= previous);
            previous = rate;
        }
    }

    #[test]
    fn default_sensitivity_lies_between_the_published_values() {
        let s = MassBalanceParams::default().ela_sensitivity_m_per_k;
        assert!((LAPSE_RATE_ELA_SENSITIVITY_M_PER_K - 153.85).abs() < 0.01);
        assert!(
            s > ENERGY_BALANCE_ELA_SENSITIVITY_M_PER_K && s < LAPSE_RATE_ELA_SENSITIVITY_M_PER_K
        );
    }

    #[test]
    fn out_of_range_gradient_is_rejected_with_its_field() {
        let params = MassBalanceParams {
            gradient_below_ela_mwe_per_100m: 7.0,
            ..Default::default()
        };
        let message = params.validate().unwrap_err().to_string();
        assert!(
            message.contains("mass_balance.gradient_below_ela_mwe_per_100m"),
            "{message}"
        );
        assert!(message.contains('7'), "{message}");
    }
}
