//! Succession stage per cell from cover and age, after the forefield sequences pioneer ->
//! meadow -> shrubs -> young forest -> mature forest of Burga et al. (2010, Flora
//! 205:561-576) and Chapin, Walker, Fastie & Sharman (1994, Ecol. Monogr. 64(2):149-175).
//!
//! Codes are those of [`crate::plants::vegetation_code`]. Thresholds (defaults below) are
//! plot-level conventions (common practice, no source), first match wins:
//!
//! | stage | rule |
//! |---|---|
//! | 0 ice | ice at least 1 m thick |
//! | 6 mature forest | tree cover >= 0.6 and the oldest tree type present >= 80 years |
//! | 5 young forest | tree cover >= 0.25 |
//! | 4 shrubland | shrub + tree cover >= 0.25 |
//! | 3 meadow | total cover >= 0.4 with grasses and sedges >= 0.2 |
//! | 2 pioneer | total cover >= 0.05 |
//! | 1 bare ground | otherwise |

use serde::{Deserialize, Serialize};

use crate::plants::pft::{check_range, VegetationError};
use crate::plants::vegetation_code;

/// Cover and age thresholds of the stages.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct StageThresholds {
    pub pioneer_total_cover: f64,
    pub meadow_total_cover: f64,
    pub meadow_graminoid_cover: f64,
    pub shrubland_woody_cover: f64,
    pub young_forest_tree_cover: f64,
    pub mature_forest_tree_cover: f64,
    /// Years since the oldest tree type present (cover >= 0.05) established in the cell.
    pub mature_forest_age_a: f64,
}

impl Default for StageThresholds {
    fn default() -> Self {
        StageThresholds {
            pioneer_total_cover: 0.05,
            meadow_total_cover: 0.4,
            meadow_graminoid_cover: 0.2,
            shrubland_woody_cover: 0.25,
            young_forest_tree_cover: 0.25,
            mature_forest_tree_cover: 0.6,
            mature_forest_age_a: 80.0,
        }
    }
}

impl StageThresholds {
    pub fn validate(&self) -> Result<(), VegetationError> {
        for (name, value) in [
            ("stages.pioneer_total_cover", self.pioneer_total_cover),
            ("stages.meadow_total_cover", self.meadow_total_cover),
            ("stages.meadow_graminoid_cover", self.meadow_graminoid_cover),
            ("stages.shrubland_woody_cover", self.shrubland_woody_cover),
            (
                "stages.young_forest_tree_cover",
                self.young_forest_tree_cover,
            ),
            (
                "stages.mature_forest_tree_cover",
                self.mature_forest_tree_cover,
            ),
        ] {
            check_range(name, value, 0.001, 1.0, "")?;
        }
        check_range(
            "stages.mature_forest_age_a",
            self.mature_forest_age_a,
            0.0,
            1000.0,
            "years",
        )
    }
}

/// Covers of one cell summed by growth form.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct CellCover {
    pub total: f32,
    pub graminoid: f32,
    pub woody: f32,
    pub tree: f32,
    /// Age of the oldest tree type with cover >= 0.05, years.
    pub oldest_tree_age_a: f32,
}

/// Stage code of an ice-free cell: the highest stage whose condition holds. Written as
/// selects from the lowest stage up, without branches, since it runs once per cell and
/// year.
#[inline]
pub fn stage(cover: &CellCover, t: &StageThresholds32) -> u8 {
    use vegetation_code::*;
    let pick = |holds: bool, code: u8, otherwise: u8| if holds { code } else { otherwise };
    let code = pick(cover.total >= t.pioneer_total, PIONEER, BARE);
    let code = pick(
        (cover.total >= t.meadow_total) & (cover.graminoid >= t.meadow_graminoid),
        MEADOW,
        code,
    );
    let code = pick(cover.woody >= t.shrub_woody, SHRUBLAND, code);
    let code = pick(cover.tree >= t.young_tree, YOUNG_FOREST, code);
    pick(
        (cover.tree >= t.mature_tree) & (cover.oldest_tree_age_a >= t.mature_age),
        MATURE_FOREST,
        code,
    )
}

/// The thresholds as `f32` for the yearly loop.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StageThresholds32 {
    pub pioneer_total: f32,
    pub meadow_total: f32,
    pub meadow_graminoid: f32,
    pub shrub_woody: f32,
    pub young_tree: f32,
    pub mature_tree: f32,
    pub mature_age: f32,
}

impl From<&StageThresholds> for StageThresholds32 {
    fn from(t: &StageThresholds) -> Self {
        StageThresholds32 {
            pioneer_total: t.pioneer_total_cover as f32,
            meadow_total: t.meadow_total_cover as f32,
            meadow_graminoid: t.meadow_graminoid_cover as f32,
            shrub_woody: t.shrubland_woody_cover as f32,
            young_tree: t.young_forest_tree_cover as f32,
            mature_tree: t.mature_forest_tree_cover as f32,
            mature_age: t.mature_forest_age_a as f32,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stages_follow_the_table() {
        let t = StageThresholds32::from(&StageThresholds::default());
        let c = |total, graminoid, woody, tree, age| CellCover {
            total,
            graminoid,
            woody,
            tree,
            oldest_tree_age_a: age,
        };
        assert_eq!(
            stage(&c(0.01, 0.0, 0.0, 0.0, 0.0), &t),
            vegetation_code::BARE
        );
        assert_eq!(
            stage(&c(0.1, 0.0, 0.0, 0.0, 0.0), &t),
            vegetation_code::PIONEER
        );
        assert_eq!(
            stage(&c(0.6, 0.4, 0.0, 0.0, 0.0), &t),
            vegetation_code::MEADOW
        );
        assert_eq!(
            stage(&c(0.6, 0.1, 0.3, 0.0, 0.0), &t),
            vegetation_code::SHRUBLAND
        );
        assert_eq!(
            stage(&c(0.8, 0.1, 0.7, 0.7, 20.0), &t),
            vegetation_code::YOUNG_FOREST
        );
        assert_eq!(
            stage(&c(0.9, 0.1, 0.8, 0.7, 90.0), &t),
            vegetation_code::MATURE_FOREST
        );
    }
}
