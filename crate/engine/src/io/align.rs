//! Fitting a planner's grid onto the terrain grid: grids that cover the same cells pass as
//! they are; grids in the same CRS that differ in cell size or extent are resampled (bilinear
//! interpolation, an area mean when coarsening, or the nearest cell for class codes) and a
//! note says so; anything else is refused with a message naming what differs.

use crate::base::grid::{Grid, GridGeometry};
use crate::base::load_error::{LoadError, LoadProblem};

/// How values are carried onto the terrain's cells.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Resampling {
    /// Continuous quantities (thickness, elevation): bilinear between the four nearest cell
    /// centres, or the mean of the covered cells when the source is finer by more than half.
    Continuous,
    /// Class codes (succession stage): the value of the source cell under each centre.
    Nearest,
}

/// A grid on the terrain's cells, with a note for the planner when it was resampled.
#[derive(Clone, Debug, PartialEq)]
pub struct Fitted {
    pub grid: Grid,
    pub note: Option<String>,
}

/// Puts `grid` (read from `file`) on `target`'s cells.
///
/// Refuses grids in another CRS (both must state the same EPSG code, or one states none) and
/// grids that share no area with the target. Target cells outside the source stay nodata;
/// the caller decides what nodata means for its layer.
pub fn fit_to(
    grid: Grid,
    target: &GridGeometry,
    method: Resampling,
    file: &str,
) -> Result<Fitted, LoadError> {
    if grid.geometry.aligns_with(target) {
        return Ok(Fitted { grid, note: None });
    }
    let source = grid.geometry;
    if let (Some(found), Some(expected)) = (source.epsg, target.epsg) {
        if found != expected {
            return Err(LoadError::new(
                file,
                LoadProblem::CrsMismatch { found, expected },
            ));
        }
    }
    let overlap_east = source.east_m().min(target.east_m()) - source.west_m.max(target.west_m);
    let overlap_north = source.north_m.min(target.north_m) - source.south_m().max(target.south_m());
    if overlap_east <= 0.0 || overlap_north <= 0.0 {
        return Err(LoadError::new(
            file,
            LoadProblem::NoOverlap {
                west_m: source.west_m,
                south_m: source.south_m(),
                east_m: source.east_m(),
                north_m: source.north_m,
            },
        ));
    }
    let coarsening = source.cell_size_m * 1.5 < target.cell_size_m;
    let (values, how) = match method {
        Resampling::Nearest => (nearest(&grid, target), "nearest cell"),
        Resampling::Continuous if coarsening => (area_mean(&grid, target), "area mean"),
        Resampling::Continuous => (bilinear(&grid, target), "bilinear"),
    };
    let fitted = Grid {
        nodata_value: grid.nodata_value,
        ..Grid::from_values(*target, values)
    };
    let outside = fitted
        .nodata
        .iter()
        .zip(0..)
        .filter(|&(&missing, idx)| missing && !covers(&source, target, idx))
        .count();
    let mut note = format!(
        "{file}: resampled from {} x {} cells of {} m to the terrain's {} x {} cells of {} m ({how})",
        source.n_cols,
        source.n_rows,
        source.cell_size_m,
        target.n_cols,
        target.n_rows,
        target.cell_size_m
    );
    if outside > 0 {
        note.push_str(&format!(
            "; {outside} terrain cells lie outside it and have no value"
        ));
    }
    Ok(Fitted {
        grid: fitted,
        note: Some(note),
    })
}

/// True when the centre of target cell `idx` lies inside the source grid's extent.
fn covers(source: &GridGeometry, target: &GridGeometry, idx: usize) -> bool {
    let (x, y) = target.cell_centre(idx % target.n_cols, idx / target.n_cols);
    source.cell_at(x, y).is_some()
}

fn nearest(grid: &Grid, target: &GridGeometry) -> Vec<f32> {
    let source = &grid.geometry;
    (0..target.n_cells())
        .map(|idx| {
            let (x, y) = target.cell_centre(idx % target.n_cols, idx / target.n_cols);
            match source.cell_at(x, y) {
                Some((col, row)) => grid.get(col, row).unwrap_or(f32::NAN),
                None => f32::NAN,
            }
        })
        .collect()
}

/// Bilinear between source cell centres; nodata neighbours drop out and the weights of the
/// others are renormalised, so a grid edge or a hole does not pull values towards zero.
fn bilinear(grid: &Grid, target: &GridGeometry) -> Vec<f32> {
    let source = &grid.geometry;
    let last_col = source.n_cols as f64 - 1.0;
    let last_row = source.n_rows as f64 - 1.0;
    (0..target.n_cells())
        .map(|idx| {
            let (x, y) = target.cell_centre(idx % target.n_cols, idx / target.n_cols);
            if source.cell_at(x, y).is_none() {
                return f32::NAN;
            }
            // Fractional position among source cell centres, clamped at the outer half cell.
            let fc = ((x - source.west_m) / source.cell_size_m - 0.5).clamp(0.0, last_col);
            let fr = ((source.north_m - y) / source.cell_size_m - 0.5).clamp(0.0, last_row);
            let (c0, r0) = (fc.floor() as usize, fr.floor() as usize);
            let (tc, tr) = (fc - c0 as f64, fr - r0 as f64);
            let mut sum = 0.0;
            let mut weight = 0.0;
            for (dc, dr, w) in [
                (0, 0, (1.0 - tc) * (1.0 - tr)),
                (1, 0, tc * (1.0 - tr)),
                (0, 1, (1.0 - tc) * tr),
                (1, 1, tc * tr),
            ] {
                if w == 0.0 {
                    continue;
                }
                if let Some(v) = grid.get(c0 + dc, r0 + dr) {
                    sum += w * f64::from(v);
                    weight += w;
                }
            }
            if weight > 0.0 {
                (sum / weight) as f32
            } else {
                f32::NAN
            }
        })
        .collect()
}

/// Mean of the valid source cells whose centres fall inside each target cell.
fn area_mean(grid: &Grid, target: &GridGeometry) -> Vec<f32> {
    let source = &grid.geometry;
    let mut sum = vec![0.0f64; target.n_cells()];
    let mut count = vec![0u32; target.n_cells()];
    for row in 0..source.n_rows {
        for col in 0..source.n_cols {
            let Some(v) = grid.get(col, row) else {
                continue;
            };
            let (x, y) = source.cell_centre(col, row);
            if let Some((tc, tr)) = target.cell_at(x, y) {
                let idx = tr * target.n_cols + tc;
                sum[idx] += f64::from(v);
                count[idx] += 1;
            }
        }
    }
    sum.iter()
        .zip(&count)
        .map(|(&s, &n)| {
            if n > 0 {
                (s / f64::from(n)) as f32
            } else {
                f32::NAN
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn geometry(n_cols: usize, n_rows: usize, cell: f64, west: f64, north: f64) -> GridGeometry {
        GridGeometry {
            n_cols,
            n_rows,
            cell_size_m: cell,
            west_m: west,
            north_m: north,
            epsg: Some(32626),
        }
    }

    /// Values a + b x + c y at the cell centres.
    fn plane(g: GridGeometry) -> Grid {
        let values = (0..g.n_cells())
            .map(|idx| {
                let (x, y) = g.cell_centre(idx % g.n_cols, idx / g.n_cols);
                (100.0 + 0.02 * (x - 500_000.0) - 0.03 * (y - 5_000_000.0)) as f32
            })
            .collect();
        Grid::from_values(g, values)
    }

    #[test]
    fn aligned_grids_pass_unchanged() {
        let g = geometry(10, 8, 25.0, 500_000.0, 5_000_200.0);
        let fitted = fit_to(plane(g), &g, Resampling::Continuous, "a.tif").unwrap();
        assert_eq!(fitted.grid, plane(g));
        assert!(fitted.note.is_none());
    }

    // Bilinear interpolation reproduces a linear function exactly (common practice, no source).
    #[test]
    fn bilinear_refinement_reproduces_a_plane_inside_the_source() {
        let coarse = geometry(20, 16, 50.0, 500_000.0, 5_000_800.0);
        let fine = geometry(40, 32, 25.0, 500_000.0, 5_000_800.0);
        let fitted = fit_to(plane(coarse), &fine, Resampling::Continuous, "c.tif").unwrap();
        let exact = plane(fine);
        // Cells whose centre lies between source centres (not in the outer half cell).
        for row in 1..31 {
            for col in 1..39 {
                let got = fitted.grid.get(col, row).unwrap();
                let want = exact.get(col, row).unwrap();
                assert!(
                    (got - want).abs() < 1e-3,
                    "col {col} row {row}: {got} vs {want}"
                );
            }
        }
        assert!(fitted.note.unwrap().contains("bilinear"));
    }

    #[test]
    fn coarsening_takes_the_mean_of_covered_cells() {
        let fine = geometry(4, 4, 10.0, 0.0, 40.0);
        let values = (0..16).map(|v| v as f32).collect();
        let coarse = geometry(2, 2, 20.0, 0.0, 40.0);
        let fitted = fit_to(
            Grid::from_values(fine, values),
            &coarse,
            Resampling::Continuous,
            "f.tif",
        )
        .unwrap();
        // Top-left block holds 0, 1, 4, 5.
        assert_eq!(fitted.grid.values, vec![2.5, 4.5, 10.5, 12.5]);
    }

    #[test]
    fn nearest_keeps_class_codes_and_marks_cells_outside() {
        let source = geometry(2, 2, 20.0, 0.0, 40.0);
        let grid = Grid::from_values(source, vec![1.0, 2.0, 3.0, 4.0]);
        // Shifted one cell east: the last column lies outside the source.
        let target = geometry(3, 2, 20.0, 20.0, 40.0);
        let fitted = fit_to(grid, &target, Resampling::Nearest, "v.tif").unwrap();
        assert_eq!(fitted.grid.values[0], 2.0);
        assert_eq!(fitted.grid.values[3], 4.0);
        assert!(fitted.grid.nodata[1] && fitted.grid.nodata[2]);
        assert!(fitted.note.unwrap().contains("4 terrain cells lie outside"));
    }

    #[test]
    fn other_crs_and_disjoint_grids_are_refused_with_the_file_named() {
        let a = geometry(4, 4, 10.0, 0.0, 40.0);
        let mut other_crs = a;
        other_crs.epsg = Some(32632);
        let err = fit_to(
            Grid::filled(other_crs, 1.0),
            &a,
            Resampling::Nearest,
            "x.tif",
        )
        .unwrap_err();
        assert_eq!(err.file, "x.tif");
        assert!(err.to_string().contains("EPSG:32632"), "{err}");
        let far = geometry(4, 4, 10.0, 10_000.0, 40.0);
        let err = fit_to(Grid::filled(far, 1.0), &a, Resampling::Nearest, "y.tif").unwrap_err();
        assert!(err.to_string().contains("does not overlap"), "{err}");
    }
}
