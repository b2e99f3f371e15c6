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

use crate::plants::pft::{check_range, PlantType, VegetationError};

/// Growing-season temperature from elevation: T = T_0 - lapse z + dT.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GrowingSeasonParams {
    /// Mean growing-season air temperature at sea level with no anomaly, degrees C (0 to 35).
    /// 20 degrees C with 6.5 K/km puts the 6.7 degrees C treeline at 2046 m (SCIENCE-CHECKS 12).
    pub sea_level_temp_c: f64,
    /// Near-surface lapse rate, K per km (3 to 10); 6.5 is the ISA free-air rate, mid-latitude
    /// mountain near-surface rates are 5.4-5.8 (Rolland 2003, J. Climate 16, from memory).
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
/// slope limit, ramping to 1 just above the minima. Branch-free, with comparisons rather
/// than `f32::min` (which on wasm compiles to NaN-propagating code that does not
/// vectorise), since it runs once per cell, type and year.
#[inline]
pub fn suitability(rates: &TypeRates, temp_c: f32, soil: f32, slope_deg: f32) -> f32 {
    let by_temp = smaller(
        0.3 + 0.7 * (temp_c - rates.min_temp_c) / TEMPERATURE_RAMP_K,
        1.0,
    );
    let by_soil = smaller(0.3 + 0.7 * (soil - rates.min_soil) / SOIL_RAMP, 1.0);
    // `&` rather than `&&`: no branches.
    let ok = (temp_c >= rates.min_temp_c)
        & (soil >= rates.min_soil)
        & (slope_deg <= rates.max_slope_deg);
    if ok {
        by_temp * by_soil
    } else {
        0.0
    }
}

/// One year of one type in one cell. `canopy` is the cover of taller types already updated,
/// `seeds` the seed rain, `uniform` a uniform number in [0, 1) for the establishment draw.
/// Returns the new cover, at most the space the taller types leave. Branch-free (selects
/// only), so that a loop over cells vectorises.
#[inline]
pub fn update_cover(
    rates: &TypeRates,
    cover: f32,
    suitability: f32,
    canopy: f32,
    seeds: f32,
    uniform: f32,
) -> f32 {
    let step = grow_and_infill(rates, cover, suitability, canopy, seeds);
    // First establishment: at least one recruit, probability 1 - exp(-expected).
    let first = if uniform < establishment_probability(step.expected_recruits) {
        smaller(rates.recruit_cover, step.free)
    } else {
        0.0
    };
    let c = if cover > 0.0 { step.kept } else { first };
    smaller(positive(c), step.space)
}

/// [`update_cover`] where the type is already present (`cover > 0`): the same numbers,
/// without the establishment draw, which only an empty cell uses.
#[inline]
pub fn update_established_cover(
    rates: &TypeRates,
    cover: f32,
    suitability: f32,
    canopy: f32,
    seeds: f32,
) -> f32 {
    let step = grow_and_infill(rates, cover, suitability, canopy, seeds);
    smaller(positive(step.kept), step.space)
}

/// The part of a cell's year shared by [`update_cover`] and [`update_established_cover`].
struct Step {
    /// Cover after growth, mortality and infill, where the type is present.
    kept: f32,
    /// Suitable space left for recruits.
    free: f32,
    expected_recruits: f32,
    /// Space the taller types leave.
    space: f32,
}

#[inline]
fn grow_and_infill(
    rates: &TypeRates,
    cover: f32,
    suitability: f32,
    canopy: f32,
    seeds: f32,
) -> Step {
    let space = positive(1.0 - canopy);
    let light = 1.0 - (1.0 - rates.shade_tolerance) * canopy;
    let capacity = rates.max_cover * suitability;
    let c = cover;
    // Logistic growth and mortality; zero where the type is absent.
    let grown =
        c + rates.growth_rate * light * c * (capacity - c) / rates.max_cover - rates.mortality * c;
    let free = positive(smaller(space, capacity) - grown);
    let expected_recruits = seeds * rates.establishment_per_seed * suitability * light * free;
    // Infill: further recruits add their cover, at most one recruit's worth a year so that
    // cover grows by the logistic term, not by seed rain alone.
    let infill = rates.recruit_cover
        * smaller(
            smaller(positive(expected_recruits), 1.0),
            free / rates.recruit_cover,
        );
    Step {
        kept: grown + infill,
        free,
        expected_recruits,
        space,
    }
}

/// `a` if positive, else 0 (a comparison, not `f32::max`, so that it vectorises on wasm).
#[inline]
pub(crate) fn positive(a: f32) -> f32 {
    if a > 0.0 {
        a
    } else {
        0.0
    }
}

/// The smaller of two numbers (a comparison, not `f32::min`).
#[inline]
pub(crate) fn smaller(a: f32, b: f32) -> f32 {
    if a < b {
        a
    } else {
        b
    }
}

/// The larger of two numbers (a comparison, not `f32::max`).
#[inline]
pub(crate) fn larger(a: f32, b: f32) -> f32 {
    if a > b {
        a
    } else {
        b
    }
}

/// 1 - exp(-lambda) for lambda >= 0 (0 for lambda <= 0), branch-free: a series for small
/// lambda, where 1 - exp loses digits, and otherwise exp as a power of two times a degree-5
/// polynomial of the fraction (Taylor coefficients of 2^f on [-0.5, 0.5]; relative error
/// below 1e-5 in f32, common practice, no source). Vectorises where `f32::exp` would not.
#[inline]
pub fn establishment_probability(lambda: f32) -> f32 {
    let lambda = positive(lambda);
    let small = lambda * (1.0 - lambda * (0.5 - lambda * (1.0 / 6.0)));
    // exp(-lambda) = 2^x with x = -lambda log2(e), clamped above underflow.
    let x = -smaller(lambda, 80.0) * std::f32::consts::LOG2_E;
    // Round x to the nearest integer by adding and removing 1.5 * 2^23; f in [-0.5, 0.5].
    const MAGIC: f32 = 12_582_912.0;
    let shifted = x + MAGIC;
    let whole = shifted - MAGIC;
    let f = x - whole;
    let exponent = (shifted.to_bits() as i32).wrapping_sub(MAGIC.to_bits() as i32);
    let scale = f32::from_bits(((exponent + 127) as u32) << 23);
    let p = 1.0
        + f * (std::f32::consts::LN_2
            + f * (0.240_226_5 + f * (0.055_504_1 + f * (0.009_618_1 + f * 0.001_333_6))));
    let large = 1.0 - p * scale;
    if lambda < 1e-3 {
        small
    } else {
        large
    }
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
    fn establishment_probability_matches_one_minus_exp() {
        for &lambda in &[
            0.0f32, 1e-9, 1e-5, 9e-4, 1.1e-3, 0.01, 0.3, 1.0, 4.0, 20.0, 100.0,
        ] {
            let exact = -(-f64::from(lambda)).exp_m1();
            let fast = f64::from(establishment_probability(lambda));
            assert!(
                (fast - exact).abs() <= 1e-5 * exact + 1e-7,
                "{lambda}: {fast} vs {exact}"
            );
        }
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
