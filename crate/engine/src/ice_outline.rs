//! Ice thickness from a glacier outline and a surface DEM by perfect plasticity,
//! H = tau_b / (f rho g sin(alpha)) (Nye 1952, Nature 169:529-530; shape factor f after
//! Nye 1965, from memory), checked against volume-area scaling V = c A^gamma with
//! c = 0.034 km^(3 - 2 gamma) and gamma = 1.375 (Bahr, Meier & Peckham 1997, JGR
//! 102(B9):20355-20362; c from memory).
//!
//! The surface slope alpha is taken from the DEM smoothed over a window of about ten ice
//! thicknesses (the distance over which the shallow-ice balance holds; common practice, no
//! source) and floored at a minimum slope, below which the formula would give unbounded
//! thickness on flat ice. Bahr, Pfeffer & Kaser (2015, Rev. Geophys. 53:95-140) stress that
//! the scaling holds for ensembles of glaciers, not one glacier: the scaling volume is a
//! plausibility check, not a target.

use serde::{Deserialize, Serialize};
use thiserror::Error;

use crate::grid::Grid;
use crate::ice_flow::GRAVITY_M_S2;
use crate::scenario::{check_range, ScenarioError};

/// Volume-area scaling coefficient, km^(3 - 2 gamma) (Bahr et al. 1997; from memory).
pub const SCALING_COEFFICIENT_KM: f64 = 0.034;

/// Volume-area scaling exponent for glaciers (Bahr et al. 1997).
pub const SCALING_EXPONENT: f64 = 1.375;

/// Parameters of the perfect-plasticity estimate.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct PlasticityParams {
    /// Basal shear stress, Pa, 50 000 to 150 000 (the range of reconstructed glaciers on
    /// hard beds). Default 100 000, Nye's (1952) yield stress.
    pub basal_shear_stress_pa: f64,
    /// Valley shape factor f, 0.5 to 1 (Nye 1965, from memory). Default 0.8.
    pub shape_factor: f64,
    /// Slope floor, degrees, 0.5 to 10. Default 2.
    pub min_slope_deg: f64,
    /// Half-width of the surface smoothing window, m, 0 to 2000. Default 300.
    pub smoothing_radius_m: f64,
}

impl Default for PlasticityParams {
    fn default() -> Self {
        PlasticityParams {
            basal_shear_stress_pa: 100e3,
            shape_factor: 0.8,
            min_slope_deg: 2.0,
            smoothing_radius_m: 300.0,
        }
    }
}

impl PlasticityParams {
    /// Checks every number against its documented range.
    pub fn validate(&self) -> Result<(), ScenarioError> {
        check_range(
            "outline.basal_shear_stress_pa",
            self.basal_shear_stress_pa,
            50e3,
            150e3,
            "Pa",
        )?;
        check_range("outline.shape_factor", self.shape_factor, 0.5, 1.0, "")?;
        check_range(
            "outline.min_slope_deg",
            self.min_slope_deg,
            0.5,
            10.0,
            "degrees",
        )?;
        check_range(
            "outline.smoothing_radius_m",
            self.smoothing_radius_m,
            0.0,
            2000.0,
            "m",
        )?;
        Ok(())
    }

    /// Thickness for a surface slope (radians) and ice density (kg m^-3), m.
    pub fn thickness_for_slope_m(&self, slope_rad: f64, ice_density_kg_m3: f64) -> f64 {
        let alpha = slope_rad.max(self.min_slope_deg.to_radians());
        self.basal_shear_stress_pa
            / (self.shape_factor * ice_density_kg_m3 * GRAVITY_M_S2 * libm::sin(alpha))
    }
}

/// Problems with the outline inputs.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum OutlineError {
    #[error(transparent)]
    Params(#[from] ScenarioError),
    #[error("glacier mask has {found} cells, the surface grid has {expected}")]
    MaskLength { found: usize, expected: usize },
    #[error("the glacier mask covers no cell with a surface elevation")]
    EmptyMask,
}

/// Thickness estimate and its check.
#[derive(Clone, Debug, PartialEq)]
pub struct OutlineEstimate {
    /// Ice thickness on the surface grid, m (zero outside the mask); nodata where the
    /// surface is nodata.
    pub ice_thickness_m: Grid,
    /// Glacier area, m^2.
    pub area_m2: f64,
    /// Volume of the estimate, m^3.
    pub volume_m3: f64,
    /// Volume from volume-area scaling for the same area, m^3.
    pub scaling_volume_m3: f64,
}

/// Volume-area scaling V = c A^gamma, with A in m^2 and V in m^3.
pub fn scaling_volume_m3(area_m2: f64) -> f64 {
    SCALING_COEFFICIENT_KM * libm::pow(area_m2 / 1e6, SCALING_EXPONENT) * 1e9
}

/// Estimates thickness inside `glacier_mask` (one flag per surface cell) from the surface,
/// for ice of density `ice_density_kg_m3` (the scenario's flow density).
pub fn thickness_from_outline(
    surface_m: &Grid,
    glacier_mask: &[bool],
    params: &PlasticityParams,
    ice_density_kg_m3: f64,
) -> Result<OutlineEstimate, OutlineError> {
    params.validate()?;
    let geometry = surface_m.geometry;
    let (n_cols, n_rows) = (geometry.n_cols, geometry.n_rows);
    let n_cells = geometry.n_cells();
    if glacier_mask.len() != n_cells {
        return Err(OutlineError::MaskLength {
            found: glacier_mask.len(),
            expected: n_cells,
        });
    }
    let inside = |idx: usize| glacier_mask[idx] && !surface_m.nodata[idx];
    if !(0..n_cells).any(inside) {
        return Err(OutlineError::EmptyMask);
    }
    let dx = geometry.cell_size_m;
    let radius = (params.smoothing_radius_m / dx).round() as usize;
    let smoothed = box_mean(surface_m, radius);
    let mut thickness = vec![0.0_f32; n_cells];
    let (mut area_m2, mut volume_m3) = (0.0, 0.0);
    for row in 0..n_rows {
        for col in 0..n_cols {
            let idx = row * n_cols + col;
            if !inside(idx) {
                continue;
            }
            // Central differences of the smoothed surface, one-sided at the grid edge.
            let (west, east) = (col.saturating_sub(1), (col + 1).min(n_cols - 1));
            let (north, south) = (row.saturating_sub(1), (row + 1).min(n_rows - 1));
            let dz_dx = (smoothed[row * n_cols + east] - smoothed[row * n_cols + west])
                / ((east - west).max(1) as f64 * dx);
            let dz_dy = (smoothed[south * n_cols + col] - smoothed[north * n_cols + col])
                / ((south - north).max(1) as f64 * dx);
            let slope = libm::atan(libm::hypot(dz_dx, dz_dy));
            let h = params.thickness_for_slope_m(slope, ice_density_kg_m3);
            thickness[idx] = h as f32;
            area_m2 += geometry.cell_area_m2();
            volume_m3 += h * geometry.cell_area_m2();
        }
    }
    let mut grid = Grid::filled(geometry, 0.0);
    grid.values = thickness;
    for (idx, missing) in surface_m.nodata.iter().enumerate() {
        if *missing {
            grid.values[idx] = f32::NAN;
            grid.nodata[idx] = true;
        }
    }
    Ok(OutlineEstimate {
        ice_thickness_m: grid,
        area_m2,
        volume_m3,
        scaling_volume_m3: scaling_volume_m3(area_m2),
    })
}

/// Mean of the valid cells in a (2r+1)^2 window around each cell, by a summed-area table
/// (O(N) whatever the radius). Nodata cells take the value 0 and do not count.
fn box_mean(grid: &Grid, radius: usize) -> Vec<f64> {
    let (n_cols, n_rows) = (grid.n_cols(), grid.n_rows());
    let stride = n_cols + 1;
    let mut sums = vec![0.0_f64; (n_rows + 1) * stride];
    let mut counts = vec![0.0_f64; (n_rows + 1) * stride];
    for row in 0..n_rows {
        for col in 0..n_cols {
            let idx = row * n_cols + col;
            let (v, n) = if grid.nodata[idx] {
                (0.0, 0.0)
            } else {
                (f64::from(grid.values[idx]), 1.0)
            };
            let at = (row + 1) * stride + col + 1;
            sums[at] = v + sums[at - 1] + sums[at - stride] - sums[at - stride - 1];
            counts[at] = n + counts[at - 1] + counts[at - stride] - counts[at - stride - 1];
        }
    }
    let window = |table: &[f64], r0: usize, r1: usize, c0: usize, c1: usize| {
        table[r1 * stride + c1] - table[r0 * stride + c1] - table[r1 * stride + c0]
            + table[r0 * stride + c0]
    };
    let mut out = vec![0.0; n_cols * n_rows];
    for row in 0..n_rows {
        let (r0, r1) = (row.saturating_sub(radius), (row + radius + 1).min(n_rows));
        for col in 0..n_cols {
            let (c0, c1) = (col.saturating_sub(radius), (col + radius + 1).min(n_cols));
            let n = window(&counts, r0, r1, c0, c1);
            out[row * n_cols + col] = if n > 0.0 {
                window(&sums, r0, r1, c0, c1) / n
            } else {
                0.0
            };
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::GridGeometry;

    #[test]
    fn box_mean_of_a_plane_is_the_plane_away_from_edges() {
        let g = GridGeometry {
            n_cols: 9,
            n_rows: 9,
            cell_size_m: 10.0,
            west_m: 0.0,
            north_m: 0.0,
            epsg: None,
        };
        let grid = Grid::from_values(g, (0..81).map(|i| (i % 9) as f32 * 2.0).collect());
        let mean = box_mean(&grid, 2);
        assert!((mean[4 * 9 + 4] - 8.0).abs() < 1e-12);
    }

    #[test]
    fn mask_of_the_wrong_length_is_an_error() {
        let g = GridGeometry {
            n_cols: 4,
            n_rows: 4,
            cell_size_m: 10.0,
            west_m: 0.0,
            north_m: 0.0,
            epsg: None,
        };
        let surface = Grid::filled(g, 100.0);
        let err = thickness_from_outline(&surface, &[true; 3], &PlasticityParams::default(), 910.0);
        assert!(matches!(
            err,
            Err(OutlineError::MaskLength {
                found: 3,
                expected: 16
            })
        ));
        let err =
            thickness_from_outline(&surface, &[false; 16], &PlasticityParams::default(), 910.0);
        assert!(matches!(err, Err(OutlineError::EmptyMask)));
    }
}
