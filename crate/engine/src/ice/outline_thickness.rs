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
//!
//! Near the margin the slope rule alone would leave a cliff (161 m at the edge of ice on a
//! 5 degree slope): there the thickness is capped by Nye's (1952) perfectly plastic profile
//! over a flat bed, h = sqrt(2 tau x / (rho g)), x the distance to the outline (half-way
//! between the cell centres inside and outside it), found by an exact Euclidean distance
//! transform (Felzenszwalb & Huttenlocher 2012, Theory Comput. 8:415-428).

use serde::{Deserialize, Serialize};
use thiserror::Error;

use crate::base::grid::Grid;
use crate::ice::flow::GRAVITY_M_S2;
use crate::params::{check_range, ScenarioError};

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
    let inside_mask: Vec<bool> = (0..n_cells).map(inside).collect();
    let distance_cells = squared_distance_to_outside(&inside_mask, n_cols, n_rows);
    let rho_g = ice_density_kg_m3 * GRAVITY_M_S2;
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
            let margin_m = (distance_cells[idx].sqrt() - 0.5) * dx;
            let nye_m = (2.0 * params.basal_shear_stress_pa * margin_m / rho_g).sqrt();
            let h = params
                .thickness_for_slope_m(slope, ice_density_kg_m3)
                .min(nye_m);
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

/// Squared distance, in cells, from each cell centre to the nearest centre of a cell outside
/// the mask (very large where there is none), by two passes of the exact 1-D transform.
fn squared_distance_to_outside(inside: &[bool], n_cols: usize, n_rows: usize) -> Vec<f64> {
    const FAR: f64 = 1e20;
    let mut d: Vec<f64> = inside.iter().map(|&i| if i { FAR } else { 0.0 }).collect();
    let n = n_cols.max(n_rows);
    let (mut f, mut out) = (vec![0.0; n], vec![0.0; n]);
    let (mut v, mut z) = (vec![0usize; n], vec![0.0; n + 1]);
    for col in 0..n_cols {
        for row in 0..n_rows {
            f[row] = d[row * n_cols + col];
        }
        distance_1d(&f[..n_rows], &mut out[..n_rows], &mut v, &mut z);
        for row in 0..n_rows {
            d[row * n_cols + col] = out[row];
        }
    }
    for row in 0..n_rows {
        f[..n_cols].copy_from_slice(&d[row * n_cols..(row + 1) * n_cols]);
        distance_1d(&f[..n_cols], &mut out[..n_cols], &mut v, &mut z);
        d[row * n_cols..(row + 1) * n_cols].copy_from_slice(&out[..n_cols]);
    }
    d
}

/// The lower envelope of parabolas (q - p)^2 + f(p): Felzenszwalb & Huttenlocher (2012).
fn distance_1d(f: &[f64], out: &mut [f64], v: &mut [usize], z: &mut [f64]) {
    let n = f.len();
    if n == 0 {
        return;
    }
    let sq = |q: usize| (q * q) as f64;
    let mut k = 0;
    v[0] = 0;
    z[0] = f64::NEG_INFINITY;
    z[1] = f64::INFINITY;
    for q in 1..n {
        loop {
            let p = v[k];
            let s = ((f[q] + sq(q)) - (f[p] + sq(p))) / (2.0 * (q - p) as f64);
            if s <= z[k] && k > 0 {
                k -= 1;
                continue;
            }
            if s <= z[k] {
                // k == 0 and the new parabola is lower everywhere: it replaces the first.
                v[0] = q;
                z[1] = f64::INFINITY;
            } else {
                k += 1;
                v[k] = q;
                z[k] = s;
                z[k + 1] = f64::INFINITY;
            }
            break;
        }
    }
    let mut k = 0;
    for (q, o) in out.iter_mut().enumerate() {
        while z[k + 1] < q as f64 {
            k += 1;
        }
        let p = v[k];
        let dq = q as f64 - p as f64;
        *o = dq * dq + f[p];
    }
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
    use crate::base::grid::GridGeometry;

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
    fn distance_transform_matches_brute_force() {
        let (n_cols, n_rows) = (13, 9);
        let inside: Vec<bool> = (0..n_cols * n_rows)
            .map(|i| {
                let (r, c) = (i / n_cols, i % n_cols);
                !(r == 0 || (r == 5 && c == 7) || (c == 12 && r > 3))
            })
            .collect();
        let d = squared_distance_to_outside(&inside, n_cols, n_rows);
        for (i, &found) in d.iter().enumerate() {
            let (r, c) = ((i / n_cols) as f64, (i % n_cols) as f64);
            let brute = (0..n_cols * n_rows)
                .filter(|&j| !inside[j])
                .map(|j| {
                    let (rj, cj) = ((j / n_cols) as f64, (j % n_cols) as f64);
                    (r - rj).powi(2) + (c - cj).powi(2)
                })
                .fold(f64::INFINITY, f64::min);
            assert_eq!(found, brute, "cell {i}");
        }
    }

    /// Nye (1952): h = sqrt(2 tau x / (rho g)) is 47.2 m at 100 m from the margin for
    /// 100 kPa and 917 kg m^-3 [C]; far inside, the slope rule (161 m on 5 degrees) holds.
    #[test]
    fn the_margin_follows_nye_and_the_interior_the_slope_rule() {
        let (n, dx) = (60, 40.0);
        let g = GridGeometry {
            n_cols: n,
            n_rows: n,
            cell_size_m: dx,
            west_m: 0.0,
            north_m: 0.0,
            epsg: None,
        };
        let tan5 = libm::tan(5f64.to_radians());
        let surface = Grid::from_values(
            g,
            (0..n * n)
                .map(|i| (3000.0 - (i % n) as f64 * dx * tan5) as f32)
                .collect(),
        );
        // Ice everywhere but the first three rows (north).
        let mask: Vec<bool> = (0..n * n).map(|i| i / n >= 3).collect();
        let estimate =
            thickness_from_outline(&surface, &mask, &PlasticityParams::default(), 917.0).unwrap();
        // Row 5 lies 3 cells from row 2, outside: the margin is 2.5 cells = 100 m away.
        let h = estimate.ice_thickness_m.values[5 * n + n / 2];
        assert!((f64::from(h) - 47.15).abs() < 0.05, "{h}");
        let slope_rule = 100e3 / (0.8 * 917.0 * 9.81 * libm::sin(5f64.to_radians()));
        let deep = estimate.ice_thickness_m.values[40 * n + n / 2];
        assert!(
            (f64::from(deep) - slope_rule).abs() < 0.5,
            "{deep} {slope_rule}"
        );
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
