//! Establishment, growth, shading and mortality of plant cover in one cell and year.
//!
//! Growing-season temperature falls with elevation at a lapse rate, so a treeline emerges
//! where it drops below the trees' threshold: 6.7 degrees C seasonal mean at the climatic
//! treeline (Körner & Paulsen 2004, J. Biogeogr. 31:713-732). Establishment is the chance
//! that at least one of the expected recruits (seed rain times establishment per seed times
//! suitability, light and free space) survives, 1 - exp(-lambda), as for Poisson-distributed
//! recruits (common practice, no source). Cover grows logistically,
//! dc/dt = r c (K - c) / c_max - m c with K = c_max times suitability (Verhulst 1838), and
//! taller types shade shorter ones: the shorter type's growth and establishment fall with
//! the taller cover above it by (1 - shade tolerance), the shade-tolerance trade-off of
//! succession models (Pacala et al. 1996, Ecol. Monogr. 66:1-43, from memory).

use serde::{Deserialize, Serialize};

use crate::pft::{check_range, PlantType, VegetationError};

/// Growing-season temperature from elevation: T = T_0 - lapse z + dT.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GrowingSeasonParams {
    /// Mean growing-season air temperature at sea level with no anomaly, degrees C (0 to 35).
    /// 20 degrees C with 6.5 K/km puts the 6.7 degrees C treeline at 2046 m (SCIENCE-CHECKS 12).
    pub sea_level_temp_c: f64,
    /// Near-surface lapse rate, K per km (3 to 10); 6.5 is the ISA free-air rate, Alpine
    /// near-surface rates are 5.4-5.8 (Rolland 2003, J. Climate 16, from memory).
    pub lapse_rate_k_per_km: f64,
}

impl Default for GrowingSeasonParams {
    fn default() -> Self {
        GrowingSeasonParams {
            sea_level_temp_c: 20.0,
            lapse_rate_k_per_km: 6.5,
        }
    }
}

impl GrowingSeasonParams {
    pub fn validate(&self) -> Result<(), VegetationError> {
        check_range(
            "growing_season.sea_level_temp_c",
            self.sea_level_temp_c,
            0.0,
            35.0,
            "degrees C",
        )?;
        check_range(
            "growing_season.lapse_rate_k_per_km",
            self.lapse_rate_k_per_km,
            3.0,
            10.0,
            "K per km",
        )
    }

    /// Growing-season temperature at `elevation_m` without anomaly, degrees C.
    pub fn temperature_c(&self, elevation_m: f32) -> f32 {
        (self.sea_level_temp_c - self.lapse_rate_k_per_km * f64::from(elevation_m) / 1000.0) as f32
    }
}

/// Soil index above the minimum over which suitability ramps from 0.3 to 1.
const SOIL_RAMP: f32 = 0.1;

/// Temperature above the minimum over which suitability ramps from 0.3 to 1, K.
const TEMPERATURE_RAMP_K: f32 = 1.0;

/// The traits of one type as `f32`, read in the yearly loop.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TypeRates {
    pub min_temp_c: f32,
    pub min_soil: f32,
    pub max_slope_deg: f32,
    pub growth_rate: f32,
    pub max_cover: f32,
    pub mortality: f32,
    pub shade_tolerance: f32,
    pub establishment_per_seed: f32,
    pub recruit_cover: f32,
}

impl From<&PlantType> for TypeRates {
    fn from(t: &PlantType) -> Self {
        TypeRates {
            min_temp_c: t.min_growing_season_temp_c as f32,
            min_soil: t.min_soil_index as f32,
            max_slope_deg: t.max_slope_deg as f32,
            growth_rate: t.growth_rate_per_a as f32,
            max_cover: t.max_cover as f32,
            mortality: t.mortality_per_a as f32,
            shade_tolerance: t.shade_tolerance as f32,
            establishment_per_seed: t.establishment_per_seed as f32,
            recruit_cover: t.recruit_cover as f32,
        }
    }
}

/// Site suitability in [0, 1]: zero below the temperature or soil minimum or above the
/// slope limit, ramping to 1 just above the minima.
#[inline]
pub fn suitability(rates: &TypeRates, temp_c: f32, soil: f32, slope_deg: f32) -> f32 {
    if temp_c < rates.min_temp_c || soil < rates.min_soil || slope_deg > rates.max_slope_deg {
        return 0.0;
    }
    let by_temp = (0.3 + 0.7 * (temp_c - rates.min_temp_c) / TEMPERATURE_RAMP_K).min(1.0);
    let by_soil = (0.3 + 0.7 * (soil - rates.min_soil) / SOIL_RAMP).min(1.0);
    by_temp * by_soil
}

/// One year of one type in one cell. `canopy` is the cover of taller types already updated,
/// `seeds` the seed rain, `uniform` a uniform number in (0, 1) for the establishment draw.
/// Returns the new cover, at most the space the taller types leave.
#[inline]
pub fn update_cover(
    rates: &TypeRates,
    cover: f32,
    suitability: f32,
    canopy: f32,
    seeds: f32,
    uniform: f32,
) -> f32 {
    let space = (1.0 - canopy).max(0.0);
    let light = 1.0 - (1.0 - rates.shade_tolerance) * canopy;
    let capacity = rates.max_cover * suitability;
    let mut c = cover;
    if c > 0.0 {
        c += rates.growth_rate * light * c * (capacity - c) / rates.max_cover - rates.mortality * c;
    }
    let free = (space.min(capacity) - c).max(0.0);
    let expected_recruits = seeds * rates.establishment_per_seed * suitability * light * free;
    if expected_recruits > 0.0 {
        if c > 0.0 {
            // Infill: further recruits add their cover, at most one recruit's worth a year
            // so that cover grows by the logistic term, not by seed rain alone.
            c += rates.recruit_cover * expected_recruits.min(1.0).min(free / rates.recruit_cover);
        } else if uniform < 1.0 - (-expected_recruits).exp() {
            c = rates.recruit_cover.min(free);
        }
    }
    c.clamp(0.0, space)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn no_establishment_below_the_temperature_minimum() {
        let rates = TypeRates::from(&PlantType::conifers());
        assert_eq!(suitability(&rates, 6.6, 1.0, 5.0), 0.0);
        assert!(suitability(&rates, 6.8, 1.0, 5.0) > 0.0);
        assert_eq!(update_cover(&rates, 0.0, 0.0, 0.0, 1e9, 0.0), 0.0);
    }

    #[test]
    fn cover_approaches_the_potential_and_respects_the_canopy() {
        let t = PlantType::grasses_sedges();
        let rates = TypeRates::from(&t);
        let mut c = 0.01;
        for _ in 0..500 {
            c = update_cover(&rates, c, 1.0, 0.0, 0.0, 0.5);
        }
        assert!((f64::from(c) - t.potential_cover(1.0)).abs() < 1e-3, "{c}");
        assert!(update_cover(&rates, 0.8, 1.0, 0.7, 0.0, 0.5) <= 0.3 + 1e-6);
    }
}
