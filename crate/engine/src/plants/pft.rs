//! Plant functional types: the traits of each group of species the colonisation model follows,
//! with defaults taken from published ranges (sources beside each default).
//!
//! Five defaults stand for the groups of a continental glacier-forefield chronosequence (Burga et
//! al. 2010, Flora 205:561-576) and of a maritime one (Chapin, Walker, Fastie & Sharman 1994,
//! Ecol. Monogr. 64(2):149-175): pioneer mosses, lichens and plumed herbs; grasses and sedges;
//! low shrubs with nitrogen fixers; light-seeded broadleaf pioneer trees; late-successional
//! conifers. Every trait is editable; [`PlantType::validate`] checks each against a stated
//! range and names field, value and range on failure.

pub(crate) use crate::plants::error::check_range;
pub use crate::plants::error::VegetationError;
use crate::plants::kernels::KernelFamily;
use serde::{Deserialize, Serialize};

/// Most plant types one scenario may define (fixed so yearly summaries need no allocation).
pub const MAX_TYPES: usize = 8;

/// Growth form: decides which succession stage a type's cover counts towards.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum GrowthForm {
    /// Mosses, lichens and small herbs of the first years.
    PioneerHerb,
    /// Grasses and sedges that close a meadow sward.
    Graminoid,
    /// Dwarf and low shrubs.
    Shrub,
    Tree,
}

/// One plant functional type.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlantType {
    /// Name shown in outputs.
    pub name: String,
    pub growth_form: GrowthForm,
    /// Dispersal kernel family.
    pub kernel: KernelFamily,
    /// Mean dispersal distance of the local kernel, m (1 to 5000).
    pub mean_dispersal_m: f64,
    /// Shape p of the 2Dt kernel (Clark et al. 1999), 0.6 to 20; ignored by other families.
    pub kernel_shape_p: f64,
    /// Share of seed that travels on long-distance events (0 to 0.5).
    pub long_distance_share: f64,
    /// Mean distance of long-distance events, m (10 to 50000).
    pub long_distance_mean_m: f64,
    /// Years from establishment in a cell to first seed (1 to 200).
    pub age_first_seed_a: f64,
    /// Viable seeds per m2 of fertile cover per year (0 to 1e6).
    pub fecundity_per_m2_a: f64,
    /// Fraction of seeds landing on free, suitable ground that become a recruit (0 to 1).
    pub establishment_per_seed: f64,
    /// Cover fraction a cell gains from one year's recruits when first colonised (1e-6 to 0.1).
    pub recruit_cover: f64,
    /// Soil development index needed to establish (0 to 1).
    pub min_soil_index: f64,
    /// Mean growing-season air temperature needed to establish and grow, degrees C (-10 to 30).
    pub min_growing_season_temp_c: f64,
    /// Steepest ground the type grows on, degrees (0 to 90).
    pub max_slope_deg: f64,
    /// Intrinsic rate of cover increase of the logistic growth, per year (0.001 to 5).
    pub growth_rate_per_a: f64,
    /// Largest cover fraction the type reaches alone in a cell (0.01 to 1).
    pub max_cover: f64,
    /// Canopy layer: a higher class shades every lower one (1 to 10).
    pub height_class: u8,
    /// 0: grows only in full light; 1: unaffected by shade from taller types.
    pub shade_tolerance: f64,
    /// Fraction of cover lost per year to background mortality (0 to 0.5).
    pub mortality_per_a: f64,
    /// Nitrogen fixer: speeds soil development where it grows.
    pub nitrogen_fixer: bool,
}

impl PlantType {
    /// Checks every trait; `prefix` names the type in messages (e.g. `types[2]`).
    pub fn validate(&self, prefix: &str) -> Result<(), VegetationError> {
        let field = |name: &str| format!("{prefix}.{name}");
        if self.name.trim().is_empty() {
            return Err(VegetationError::Invalid {
                field: field("name"),
                problem: "name is empty".to_string(),
            });
        }
        let checks: [(&str, f64, f64, f64, &'static str); 17] = [
            ("mean_dispersal_m", self.mean_dispersal_m, 1.0, 5000.0, "m"),
            ("kernel_shape_p", self.kernel_shape_p, 0.6, 20.0, ""),
            (
                "long_distance_share",
                self.long_distance_share,
                0.0,
                0.5,
                "",
            ),
            (
                "long_distance_mean_m",
                self.long_distance_mean_m,
                10.0,
                50_000.0,
                "m",
            ),
            (
                "age_first_seed_a",
                self.age_first_seed_a,
                1.0,
                200.0,
                "years",
            ),
            (
                "fecundity_per_m2_a",
                self.fecundity_per_m2_a,
                0.0,
                1e6,
                "seeds per m2 per year",
            ),
            (
                "establishment_per_seed",
                self.establishment_per_seed,
                0.0,
                1.0,
                "",
            ),
            ("recruit_cover", self.recruit_cover, 1e-6, 0.1, ""),
            ("min_soil_index", self.min_soil_index, 0.0, 1.0, ""),
            (
                "min_growing_season_temp_c",
                self.min_growing_season_temp_c,
                -10.0,
                30.0,
                "degrees C",
            ),
            ("max_slope_deg", self.max_slope_deg, 0.0, 90.0, "degrees"),
            (
                "growth_rate_per_a",
                self.growth_rate_per_a,
                0.001,
                5.0,
                "per year",
            ),
            ("max_cover", self.max_cover, 0.01, 1.0, ""),
            ("height_class", f64::from(self.height_class), 1.0, 10.0, ""),
            ("shade_tolerance", self.shade_tolerance, 0.0, 1.0, ""),
            (
                "mortality_per_a",
                self.mortality_per_a,
                0.0,
                0.5,
                "per year",
            ),
            (
                "growth_rate_per_a minus mortality_per_a",
                self.growth_rate_per_a - self.mortality_per_a,
                1e-4,
                5.0,
                "per year",
            ),
        ];
        for (name, value, min, max, unit) in checks {
            check_range(&field(name), value, min, max, unit)?;
        }
        Ok(())
    }

    /// Cover the type settles at alone on fully suitable ground: the equilibrium of
    /// dc/dt = r c (K - c) / K - m c, i.e. K (1 - m / r).
    pub fn potential_cover(&self, suitability: f64) -> f64 {
        let k = self.max_cover * suitability;
        (k - self.mortality_per_a * self.max_cover / self.growth_rate_per_a).max(0.0)
    }

    /// Pioneer mosses, lichens and plumed herbs (*Epilobium*-like). Plumed seed travels far:
    /// the fat-tailed 2Dt kernel (Clark et al. 1999, Ecology 80:1475) with a 100 m mean and a
    /// km-scale long-distance share; release height 0.5 m and fall speed 0.2 m/s give a modal
    /// distance of order 12 m (Okubo & Levin 1989 rule of thumb, SCIENCE-CHECKS section 8), the
    /// plume carries a tail far beyond it. First pioneers about 7 years after deglaciation
    /// (Burga et al. 2010) set the growth rate and recruit size.
    pub fn pioneer_herbs() -> PlantType {
        PlantType {
            name: "pioneer mosses and herbs".to_string(),
            growth_form: GrowthForm::PioneerHerb,
            kernel: KernelFamily::TwoDt,
            mean_dispersal_m: 100.0,
            kernel_shape_p: 1.0,
            long_distance_share: 0.1,
            long_distance_mean_m: 2000.0,
            age_first_seed_a: 2.0,
            fecundity_per_m2_a: 2000.0,
            establishment_per_seed: 1e-3,
            recruit_cover: 0.004,
            min_soil_index: 0.06,
            min_growing_season_temp_c: 2.0,
            max_slope_deg: 45.0,
            growth_rate_per_a: 0.5,
            max_cover: 0.6,
            height_class: 1,
            shade_tolerance: 0.3,
            mortality_per_a: 0.05,
            nitrogen_fixer: false,
        }
    }

    /// Grasses and sedges: short negative-exponential dispersal (mean 20 m, value from memory
    /// for unplumed graminoid seed), closing a sward a few decades after the pioneers (the
    /// *Epilobietum* about 27 years after deglaciation, Burga et al. 2010).
    pub fn grasses_sedges() -> PlantType {
        PlantType {
            name: "grasses and sedges".to_string(),
            growth_form: GrowthForm::Graminoid,
            kernel: KernelFamily::NegativeExponential,
            mean_dispersal_m: 20.0,
            kernel_shape_p: 1.0,
            long_distance_share: 0.02,
            long_distance_mean_m: 500.0,
            age_first_seed_a: 3.0,
            fecundity_per_m2_a: 2000.0,
            establishment_per_seed: 5e-4,
            recruit_cover: 0.002,
            min_soil_index: 0.2,
            min_growing_season_temp_c: 3.0,
            max_slope_deg: 40.0,
            growth_rate_per_a: 0.3,
            max_cover: 0.9,
            height_class: 2,
            shade_tolerance: 0.4,
            mortality_per_a: 0.03,
            nitrogen_fixer: false,
        }
    }

    /// Low shrubs including nitrogen fixers (*Dryas*, green alder, willow): first shrubs on
    /// ground ice-free for about 12-15 years (Burga et al. 2010); alder in the maritime
    /// sequence fixes nitrogen and dominates at 50-100 years (Chapin et al. 1994). Plumed or
    /// winged seed: 2Dt with a 30 m mean (value from memory).
    pub fn low_shrubs() -> PlantType {
        PlantType {
            name: "low shrubs and nitrogen fixers".to_string(),
            growth_form: GrowthForm::Shrub,
            kernel: KernelFamily::TwoDt,
            mean_dispersal_m: 30.0,
            kernel_shape_p: 1.0,
            long_distance_share: 0.05,
            long_distance_mean_m: 1000.0,
            age_first_seed_a: 6.0,
            fecundity_per_m2_a: 500.0,
            establishment_per_seed: 3e-3,
            recruit_cover: 0.005,
            min_soil_index: 0.08,
            min_growing_season_temp_c: 4.5,
            max_slope_deg: 38.0,
            growth_rate_per_a: 0.25,
            max_cover: 0.8,
            height_class: 3,
            shade_tolerance: 0.4,
            mortality_per_a: 0.02,
            nitrogen_fixer: true,
        }
    }

    /// Light-seeded broadleaf pioneer trees (birch-like, with larch in mind). Mean dispersal
    /// 65 m in the open (Liu & Evans 2021, Forests 12:929); 2Dt for the fat tail Clark (1998,
    /// Am. Nat. 152:204) finds in tree seed data. First seed at 10 years (value from memory
    /// for open-grown birch). Needs the treeline temperature, 6.7 degrees C seasonal mean
    /// (Körner & Paulsen 2004, J. Biogeogr. 31:713).
    pub fn broadleaf_trees() -> PlantType {
        PlantType {
            name: "broadleaf pioneer trees".to_string(),
            growth_form: GrowthForm::Tree,
            kernel: KernelFamily::TwoDt,
            mean_dispersal_m: 65.0,
            kernel_shape_p: 1.0,
            long_distance_share: 0.05,
            long_distance_mean_m: 1500.0,
            age_first_seed_a: 10.0,
            fecundity_per_m2_a: 400.0,
            establishment_per_seed: 2e-3,
            recruit_cover: 0.001,
            min_soil_index: 0.2,
            min_growing_season_temp_c: 6.7,
            max_slope_deg: 35.0,
            growth_rate_per_a: 0.05,
            max_cover: 0.85,
            height_class: 4,
            shade_tolerance: 0.15,
            mortality_per_a: 0.01,
            nitrogen_fixer: false,
        }
    }

    /// Late-successional conifers (spruce and stone pine in mind): most seed within 20-30 m of
    /// the crown and 1.2-2.9 % beyond 110 m (Suchockas, Miskininkyste 2(52):81-88), which a
    /// 2Dt kernel with a 35 m mean and p = 1.5 reproduces (2.8 % beyond 110 m). A tenth of
    /// the seed travels on long-distance events: Clark (1998, Am. Nat. 152:204) finds tree
    /// seed data consistent with more than 10 % dispersed in a long fat-tailed kernel, which
    /// is what lets trees migrate at 10^2-10^3 m a^-1. First cones after about 20 years on
    /// open ground (value from memory for open-grown spruce), recruits of 0.2 % cover per
    /// 25 m cell (a few seedlings, value from memory); with these the front on open meadow
    /// advances at about 60 m a^-1 (migration reference check), inside the Holocene range and
    /// behind the broadleaf pioneers. Shade tolerant, so they establish under the pioneers
    /// and overtop them; larch-stone pine forest needs more than 150 years on deglaciated
    /// ground (Burga et al. 2010). Treeline temperature as for the broadleaf type.
    pub fn conifers() -> PlantType {
        PlantType {
            name: "late-successional conifers".to_string(),
            growth_form: GrowthForm::Tree,
            kernel: KernelFamily::TwoDt,
            mean_dispersal_m: 35.0,
            kernel_shape_p: 1.5,
            long_distance_share: 0.1,
            long_distance_mean_m: 1500.0,
            age_first_seed_a: 20.0,
            fecundity_per_m2_a: 300.0,
            establishment_per_seed: 5e-4,
            recruit_cover: 0.002,
            min_soil_index: 0.35,
            min_growing_season_temp_c: 6.7,
            max_slope_deg: 40.0,
            growth_rate_per_a: 0.04,
            max_cover: 0.95,
            height_class: 5,
            shade_tolerance: 0.7,
            mortality_per_a: 0.006,
            nitrogen_fixer: false,
        }
    }

    /// The five default types, shortest first.
    pub fn defaults() -> Vec<PlantType> {
        vec![
            PlantType::pioneer_herbs(),
            PlantType::grasses_sedges(),
            PlantType::low_shrubs(),
            PlantType::broadleaf_trees(),
            PlantType::conifers(),
        ]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_are_valid() {
        for (i, t) in PlantType::defaults().iter().enumerate() {
            t.validate(&format!("types[{i}]")).expect("valid default");
        }
    }

    #[test]
    fn bad_trait_names_field_value_and_range() {
        let t = PlantType {
            max_cover: 1.5,
            ..PlantType::conifers()
        };
        let message = t.validate("types[4]").unwrap_err().to_string();
        assert!(message.contains("types[4].max_cover"), "{message}");
        assert!(message.contains("1.5"), "{message}");
    }

    #[test]
    fn unknown_trait_is_refused() {
        let mut value = serde_json::to_value(PlantType::conifers()).expect("serialises");
        value["leaf_area"] = serde_json::json!(3.0);
        assert!(serde_json::from_value::<PlantType>(value).is_err());
    }
}
