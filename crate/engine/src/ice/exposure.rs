//! Terrain age: the year each cell became ice-free, with re-glaciation (a cell that ice covers
//! again loses its exposure year and gets a new one when the ice leaves; the latest counts).
//!
//! A cell counts as ice-covered while its thickness is at least 1 m: thinner ice is within
//! the error of thickness grids and of the flow model at the margin (common practice, no
//! source). Cells ice-free at the start are marked [`ICE_FREE_AT_START`], distinct from any
//! simulated year, until ice covers them.

/// Thickness at and above which a cell is ice-covered, m.
pub const ICE_COVER_THRESHOLD_M: f32 = 1.0;

/// Marker: the cell is under ice now.
pub const STILL_ICE_COVERED: i32 = i32::MAX;

/// Marker: the cell was ice-free when the run started and has not been covered since.
pub const ICE_FREE_AT_START: i32 = i32::MIN;

/// Exposure year per cell.
#[derive(Clone, Debug, PartialEq)]
pub struct ExposureTracker {
    year_exposed: Vec<i32>,
    /// Times each cell was covered again after being ice-free (saturates at 255).
    reglaciations: Vec<u8>,
}

impl ExposureTracker {
    /// Starts from the initial thickness.
    pub fn new(ice_thickness_m: &[f32]) -> ExposureTracker {
        ExposureTracker {
            year_exposed: ice_thickness_m
                .iter()
                .map(|&h| {
                    if h >= ICE_COVER_THRESHOLD_M {
                        STILL_ICE_COVERED
                    } else {
                        ICE_FREE_AT_START
                    }
                })
                .collect(),
            reglaciations: vec![0; ice_thickness_m.len()],
        }
    }

    /// Records the thickness at the end of `year` for the cells in `cells` (a range of cell
    /// indices; cells outside it must not have changed). Returns how many became ice-free.
    pub fn update(
        &mut self,
        ice_thickness_m: &[f32],
        year: i32,
        cells: std::ops::Range<usize>,
    ) -> usize {
        let mut newly_exposed = 0;
        let years = &mut self.year_exposed[cells.clone()];
        let counts = &mut self.reglaciations[cells.clone()];
        for ((exposed, count), &h) in years.iter_mut().zip(counts).zip(&ice_thickness_m[cells]) {
            let covered = h >= ICE_COVER_THRESHOLD_M;
            if covered && *exposed != STILL_ICE_COVERED {
                *exposed = STILL_ICE_COVERED;
                *count = count.saturating_add(1);
            } else if !covered && *exposed == STILL_ICE_COVERED {
                *exposed = year;
                newly_exposed += 1;
            }
        }
        newly_exposed
    }

    /// Year each cell became ice-free, or one of the two markers.
    pub fn year_exposed(&self) -> &[i32] {
        &self.year_exposed
    }

    /// Times each cell was re-covered by ice after being ice-free.
    pub fn reglaciations(&self) -> &[u8] {
        &self.reglaciations
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exposure_keeps_the_latest_year_and_marks_initially_free_cells() {
        let mut tracker = ExposureTracker::new(&[50.0, 0.5, 20.0]);
        assert_eq!(
            tracker.year_exposed(),
            &[STILL_ICE_COVERED, ICE_FREE_AT_START, STILL_ICE_COVERED]
        );
        assert_eq!(tracker.update(&[0.9, 0.0, 30.0], 2030, 0..3), 1);
        assert_eq!(
            tracker.year_exposed(),
            &[2030, ICE_FREE_AT_START, STILL_ICE_COVERED]
        );
        // Readvance covers cell 0 and the initially free cell 1; both get new years later.
        assert_eq!(tracker.update(&[5.0, 3.0, 30.0], 2040, 0..3), 0);
        assert_eq!(tracker.year_exposed(), &[STILL_ICE_COVERED; 3]);
        assert_eq!(tracker.update(&[0.0, 0.0, 0.0], 2055, 0..3), 3);
        assert_eq!(tracker.year_exposed(), &[2055, 2055, 2055]);
        assert_eq!(tracker.reglaciations(), &[1, 1, 0]);
    }

    #[test]
    fn cells_outside_the_range_are_left_alone() {
        let mut tracker = ExposureTracker::new(&[10.0, 10.0]);
        assert_eq!(tracker.update(&[0.0, 0.0], 2030, 1..2), 1);
        assert_eq!(tracker.year_exposed(), &[STILL_ICE_COVERED, 2030]);
    }
}
