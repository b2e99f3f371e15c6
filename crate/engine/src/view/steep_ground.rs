//! Steep bare ground: ice-free cells of the bed steeper than [`STEEP_SLOPE_DEG`] (Horn 1981
//! slope, `crate::base::terrain`) whose succession stage is bare ground or pioneer that year: loose,
//! unvegetated moraine and rock walls, where trails and huts need care.
//!
//! The threshold sits just below the angle of repose of loose coarse debris, about 32-38
//! degrees (Carson 1977, "Angles of repose, angles of shearing resistance and angles of talus
//! slopes", *Earth Surface Processes* 2:363-380; range from memory), because a slope on a
//! 25 m grid is an average that smooths the steepest parts; freshly exposed, unvegetated
//! moraine on such slopes is reworked fast (paraglacial adjustment, Ballantyne 2002,
//! *Quaternary Science Reviews* 21:1935-2017, from memory). A planning indication, not a
//! slope-stability assessment.

use crate::base::grid::Grid;

/// Slope from which bare ground counts as steep, degrees (see the module note).
pub const STEEP_SLOPE_DEG: f32 = 30.0;

/// Stage codes of unvegetated ground: 1 bare ground, 2 pioneer (`crate::view::layers::STAGE_PALETTE`).
pub const BARE_STAGES: [u8; 2] = [1, 2];

/// Cells of `bed` at least [`STEEP_SLOPE_DEG`] steep, from the bed's Horn slope
/// `slope_deg` (NaN at nodata, which never counts), in index order.
pub fn steep_cells(bed: &Grid, slope_deg: &[f32]) -> Vec<u32> {
    slope_deg
        .iter()
        .zip(&bed.nodata)
        .enumerate()
        .filter(|(_, (&s, &missing))| !missing && s >= STEEP_SLOPE_DEG)
        .map(|(idx, _)| idx as u32)
        .collect()
}

/// Whether a cell of stage `stage` is bare (ice, stage 0, is not: it is not ground yet).
#[inline]
pub fn is_bare(stage: u8) -> bool {
    BARE_STAGES.contains(&stage)
}

/// Calls `visit(cell index)` for each steep cell that is bare in the year whose stages are
/// `stage` (as from `Timeline::fill_stage`).
pub fn for_each_steep_bare(steep: &[u32], stage: &[u8], mut visit: impl FnMut(usize)) {
    for &c in steep {
        if stage.get(c as usize).is_some_and(|&s| is_bare(s)) {
            visit(c as usize);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::base::grid::GridGeometry;
    use crate::base::terrain::{derivatives, Sun};

    #[test]
    fn a_35_degree_plane_is_steep_and_a_25_degree_one_is_not() {
        // Planes z = tan(angle) * x on 10 m cells: Horn's slope of a plane is exact.
        for (angle, steep) in [(35.0_f64, true), (25.0, false)] {
            let rise = libm::tan(angle.to_radians()) * 10.0;
            let values: Vec<f32> = (0..25).map(|i| ((i % 5) as f64 * rise) as f32).collect();
            let geometry = GridGeometry {
                n_cols: 5,
                n_rows: 5,
                cell_size_m: 10.0,
                west_m: 0.0,
                north_m: 0.0,
                epsg: None,
            };
            let bed = Grid::from_values(geometry, values);
            let slope = derivatives(&bed, Sun::default()).slope_deg;
            assert_eq!(steep_cells(&bed, &slope).len(), if steep { 25 } else { 0 });
        }
    }

    #[test]
    fn only_bare_and_pioneer_stages_count() {
        let mut seen = Vec::new();
        for_each_steep_bare(&[0, 1, 2, 3], &[0, 1, 2, 3], |c| seen.push(c));
        assert_eq!(seen, vec![1, 2]);
    }
}
