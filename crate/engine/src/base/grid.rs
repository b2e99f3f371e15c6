//! Regular projected grids: geometry (size, cell size, origin, CRS) and flat `f32` layers.
//!
//! Cells are stored row-major from the north-west corner, indexed `row * n_cols + col`.
//! Coordinates are metres in a projected CRS; the engine never works in degrees.

use serde::{Deserialize, Serialize};

/// Largest grid the engine accepts (cells). About 4M cells keeps a few dozen `f32` layers
/// (ice, covers, soil, timeline) well inside a browser tab's memory; the large benchmark
/// sample is 1M cells.
pub const MAX_CELLS: usize = 4_194_304;

/// Where a grid lies: size in cells, square cell size and the north-west corner.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct GridGeometry {
    pub n_cols: usize,
    pub n_rows: usize,
    /// Edge length of one square cell, metres.
    pub cell_size_m: f64,
    /// Easting of the west edge of the first column, metres.
    pub west_m: f64,
    /// Northing of the north edge of the first row, metres.
    pub north_m: f64,
    /// EPSG code of the projected CRS, when the source stated one.
    pub epsg: Option<u32>,
}

impl GridGeometry {
    pub fn n_cells(&self) -> usize {
        self.n_cols * self.n_rows
    }

    /// Easting and northing of a cell's centre.
    pub fn cell_centre(&self, col: usize, row: usize) -> (f64, f64) {
        (
            self.west_m + (col as f64 + 0.5) * self.cell_size_m,
            self.north_m - (row as f64 + 0.5) * self.cell_size_m,
        )
    }

    /// The cell containing a point, if it lies on the grid.
    pub fn cell_at(&self, easting_m: f64, northing_m: f64) -> Option<(usize, usize)> {
        let col = ((easting_m - self.west_m) / self.cell_size_m).floor();
        let row = ((self.north_m - northing_m) / self.cell_size_m).floor();
        if col < 0.0 || row < 0.0 || col >= self.n_cols as f64 || row >= self.n_rows as f64 {
            return None;
        }
        Some((col as usize, row as usize))
    }

    pub fn east_m(&self) -> f64 {
        self.west_m + self.n_cols as f64 * self.cell_size_m
    }

    pub fn south_m(&self) -> f64 {
        self.north_m - self.n_rows as f64 * self.cell_size_m
    }

    /// Area of one cell, square metres.
    pub fn cell_area_m2(&self) -> f64 {
        self.cell_size_m * self.cell_size_m
    }

    /// True when `other` covers the same cells (same size, cell size, origin and CRS).
    /// Positions are compared to a thousandth of a cell, which absorbs decimal round-off in
    /// tiepoints written by other tools.
    pub fn aligns_with(&self, other: &GridGeometry) -> bool {
        let tol = 1e-3 * self.cell_size_m;
        self.n_cols == other.n_cols
            && self.n_rows == other.n_rows
            && (self.cell_size_m - other.cell_size_m).abs() < tol
            && (self.west_m - other.west_m).abs() < tol
            && (self.north_m - other.north_m).abs() < tol
            && (self.epsg == other.epsg || self.epsg.is_none() || other.epsg.is_none())
    }
}

/// One layer of values on a grid, with a nodata mask.
#[derive(Clone, Debug, PartialEq)]
pub struct Grid {
    pub geometry: GridGeometry,
    /// Cell values, row-major; cells flagged in `nodata` hold `f32::NAN`.
    pub values: Vec<f32>,
    /// `true` where the cell has no value.
    pub nodata: Vec<bool>,
    /// The nodata marker the source used, kept so a written file says the same.
    pub nodata_value: Option<f64>,
}

impl Grid {
    /// A grid with every cell set to `value` and none missing.
    pub fn filled(geometry: GridGeometry, value: f32) -> Grid {
        let n = geometry.n_cells();
        Grid {
            geometry,
            values: vec![value; n],
            nodata: vec![false; n],
            nodata_value: None,
        }
    }

    /// A grid from values, treating non-finite values as nodata.
    pub fn from_values(geometry: GridGeometry, values: Vec<f32>) -> Grid {
        assert_eq!(
            values.len(),
            geometry.n_cells(),
            "values must fill the grid"
        );
        let nodata: Vec<bool> = values.iter().map(|v| !v.is_finite()).collect();
        let values = values
            .into_iter()
            .map(|v| if v.is_finite() { v } else { f32::NAN })
            .collect();
        Grid {
            geometry,
            values,
            nodata,
            nodata_value: None,
        }
    }

    pub fn n_cols(&self) -> usize {
        self.geometry.n_cols
    }

    pub fn n_rows(&self) -> usize {
        self.geometry.n_rows
    }

    /// Value at a cell, `None` off the grid or at nodata.
    pub fn get(&self, col: usize, row: usize) -> Option<f32> {
        if col >= self.n_cols() || row >= self.n_rows() {
            return None;
        }
        let idx = row * self.n_cols() + col;
        (!self.nodata[idx]).then(|| self.values[idx])
    }

    pub fn n_valid(&self) -> usize {
        self.nodata.iter().filter(|&&m| !m).count()
    }

    /// Smallest and largest valid value, `None` when every cell is nodata.
    pub fn value_range(&self) -> Option<(f32, f32)> {
        let mut range: Option<(f32, f32)> = None;
        for (&v, &missing) in self.values.iter().zip(&self.nodata) {
            if missing {
                continue;
            }
            range = Some(match range {
                None => (v, v),
                Some((lo, hi)) => (lo.min(v), hi.max(v)),
            });
        }
        range
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn geometry() -> GridGeometry {
        GridGeometry {
            n_cols: 4,
            n_rows: 3,
            cell_size_m: 25.0,
            west_m: 1000.0,
            north_m: 5000.0,
            epsg: Some(32632),
        }
    }

    #[test]
    fn cell_centre_and_lookup_are_inverse() {
        let g = geometry();
        for row in 0..g.n_rows {
            for col in 0..g.n_cols {
                let (e, n) = g.cell_centre(col, row);
                assert_eq!(g.cell_at(e, n), Some((col, row)));
            }
        }
        assert_eq!(g.cell_centre(0, 0), (1012.5, 4987.5));
        assert_eq!(g.cell_at(999.0, 4990.0), None);
        assert_eq!(g.cell_at(1010.0, 4924.0), None);
    }

    #[test]
    fn non_finite_values_become_nodata() {
        let grid = Grid::from_values(
            geometry(),
            vec![
                1.0,
                f32::NAN,
                3.0,
                f32::INFINITY,
                5.0,
                6.0,
                7.0,
                8.0,
                9.0,
                10.0,
                11.0,
                12.0,
            ],
        );
        assert_eq!(grid.n_valid(), 10);
        assert_eq!(grid.get(1, 0), None);
        assert_eq!(grid.get(2, 0), Some(3.0));
        assert_eq!(grid.value_range(), Some((1.0, 12.0)));
    }
}
