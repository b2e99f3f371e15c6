//! Snow on steep ground: the mass-conserving gravitational transport and deposition of
//! Gruber (2007, Water Resour. Res. 43, W06412). Cells are visited from the highest surface
//! down; each keeps what arrives (its own snowfall plus what slid onto it) up to a holding
//! limit that falls linearly with slope, D = D_max (1 - beta / beta_lim) for beta < beta_lim
//! and 0 above, and passes the rest to its lower neighbours in proportion to their drop over
//! distance times a contour length (0.5 cell across a face, 0.354 across a corner; the
//! multiple-flow-direction weights of Quinn et al. 1991, Hydrol. Process. 5:59-79, from
//! memory). A cell with no lower neighbour keeps everything, so mass is conserved exactly
//! up to round-off; a headwall steeper than the limit keeps nothing.
//!
//! It runs on the ice grid once a year, on the surface at the start of the year, and only
//! inside the glacier domain: snow never slides onto ground outside it.

use crate::ice::glacier_domain::{neighbour, NEIGHBOURS};

/// The redistribution's parameters and scratch memory for one ice grid.
#[derive(Clone, Debug)]
pub struct SnowRedistribution {
    n_cols: usize,
    n_rows: usize,
    cell_size_m: f64,
    /// Tangent of the slope at and above which nothing stays.
    limit_slope_deg: f64,
    /// Most a level cell keeps in a year, m of ice.
    holding_depth_m: f64,
    /// Cells visited, highest first.
    order: Vec<u32>,
    /// Mass arriving at each cell, m of ice over the cell.
    arriving: Vec<f64>,
}

/// Contour lengths (in cells) of the eight neighbour directions.
const FACE_LENGTH: f64 = 0.5;
const CORNER_LENGTH: f64 = 0.354;

impl SnowRedistribution {
    /// A redistribution for a grid of `n_cols x n_rows` cells of `cell_size_m`; the holding
    /// depth is in metres of ice.
    pub fn new(
        n_cols: usize,
        n_rows: usize,
        cell_size_m: f64,
        limit_slope_deg: f64,
        holding_depth_m: f64,
    ) -> SnowRedistribution {
        SnowRedistribution {
            n_cols,
            n_rows,
            cell_size_m,
            limit_slope_deg,
            holding_depth_m,
            order: Vec::with_capacity(n_cols * n_rows),
            arriving: vec![0.0; n_cols * n_rows],
        }
    }

    /// Moves `snowfall` (m of ice per cell, zero outside the domain) over `surface_m` and
    /// writes what each cell keeps into `kept`. `in_domain[i] > 0` marks cells snow may reach.
    /// Allocates nothing once the first call has sized the visiting order.
    ///
    /// # Panics
    /// If a slice does not have one value per cell (a programming error).
    pub fn redistribute(
        &mut self,
        surface_m: &[f64],
        in_domain: &[f64],
        snowfall: &[f64],
        kept: &mut [f64],
    ) {
        let (n_cols, n_rows) = (self.n_cols, self.n_rows);
        let n = n_cols * n_rows;
        assert!(surface_m.len() == n && in_domain.len() == n && snowfall.len() == n);
        assert_eq!(kept.len(), n);
        kept.fill(0.0);
        self.order.clear();
        self.order
            .extend((0..n as u32).filter(|&i| in_domain[i as usize] > 0.0));
        // Highest first; equal surfaces by cell index, so the order is the same everywhere.
        self.order.sort_unstable_by(|&a, &b| {
            surface_m[b as usize]
                .total_cmp(&surface_m[a as usize])
                .then(a.cmp(&b))
        });
        self.arriving.copy_from_slice(snowfall);
        let dx = self.cell_size_m;
        let limit_tan = libm::tan(self.limit_slope_deg.to_radians());
        for &cell in &self.order {
            let idx = cell as usize;
            let input = self.arriving[idx];
            if input <= 0.0 {
                continue;
            }
            let (row, col) = (idx / n_cols, idx % n_cols);
            let slope_tan = horn_slope_tan(surface_m, n_cols, n_rows, dx, row, col);
            // The linear rule is on the angle; compare tangents only to skip the arctangent
            // where the cell is plainly steeper than the limit.
            let holding = if slope_tan >= limit_tan {
                0.0
            } else {
                let angle_deg = libm::atan(slope_tan).to_degrees();
                self.holding_depth_m * (1.0 - angle_deg / self.limit_slope_deg)
            };
            let keep = if input < holding { input } else { holding };
            let rest = input - keep;
            if rest <= 0.0 {
                kept[idx] += input;
                continue;
            }
            let z = surface_m[idx];
            let mut weights = [0.0_f64; 8];
            let mut total = 0.0;
            for (k, (dr, dc)) in NEIGHBOURS.iter().enumerate() {
                if let Some(nb) = neighbour(n_cols, n_rows, row, col, *dr, *dc) {
                    if in_domain[nb] > 0.0 && surface_m[nb] < z {
                        let diagonal = *dr != 0 && *dc != 0;
                        let (distance, length) = if diagonal {
                            (dx * std::f64::consts::SQRT_2, CORNER_LENGTH)
                        } else {
                            (dx, FACE_LENGTH)
                        };
                        weights[k] = (z - surface_m[nb]) / distance * length;
                        total += weights[k];
                    }
                }
            }
            if total <= 0.0 {
                kept[idx] += input;
                continue;
            }
            kept[idx] += keep;
            for (k, (dr, dc)) in NEIGHBOURS.iter().enumerate() {
                if weights[k] > 0.0 {
                    if let Some(nb) = neighbour(n_cols, n_rows, row, col, *dr, *dc) {
                        self.arriving[nb] += rest * weights[k] / total;
                    }
                }
            }
        }
    }
}

/// Tangent of the slope by Horn's (1981, Proc. IEEE 69(1):14-47) weighted differences, the
/// edge cells repeating their nearest neighbour.
fn horn_slope_tan(z: &[f64], n_cols: usize, n_rows: usize, dx: f64, row: usize, col: usize) -> f64 {
    let at = |dr: isize, dc: isize| {
        let r = (row as isize + dr).clamp(0, n_rows as isize - 1) as usize;
        let c = (col as isize + dc).clamp(0, n_cols as isize - 1) as usize;
        z[r * n_cols + c]
    };
    let dz_dx = ((at(-1, 1) + 2.0 * at(0, 1) + at(1, 1))
        - (at(-1, -1) + 2.0 * at(0, -1) + at(1, -1)))
        / (8.0 * dx);
    let dz_dy = ((at(1, -1) + 2.0 * at(1, 0) + at(1, 1))
        - (at(-1, -1) + 2.0 * at(-1, 0) + at(-1, 1)))
        / (8.0 * dx);
    (dz_dx * dz_dx + dz_dy * dz_dy).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A cirque: a headwall rising 60 degrees on the north, a gentle floor below.
    fn cirque(n: usize, dx: f64) -> Vec<f64> {
        let mut z = vec![0.0; n * n];
        let wall_rows = n / 3;
        let wall_tan = libm::tan(60f64.to_radians());
        let floor_tan = libm::tan(5f64.to_radians());
        for row in 0..n {
            for col in 0..n {
                let floor = (n - 1 - row) as f64 * dx * floor_tan;
                let wall = if row < wall_rows {
                    (wall_rows - row) as f64 * dx * wall_tan
                } else {
                    0.0
                };
                z[row * n + col] = 3000.0 + floor + wall;
            }
        }
        z
    }

    #[test]
    fn mass_is_conserved_and_the_headwall_keeps_nothing() {
        let (n, dx) = (30, 100.0);
        let z = cirque(n, dx);
        let domain = vec![1.0; n * n];
        let snowfall = vec![1.5; n * n];
        let mut kept = vec![0.0; n * n];
        let mut r = SnowRedistribution::new(n, n, dx, 50.0, 4.0 * 1000.0 / 910.0);
        r.redistribute(&z, &domain, &snowfall, &mut kept);
        let total_in: f64 = snowfall.iter().sum();
        let total_kept: f64 = kept.iter().sum();
        assert!(((total_kept - total_in) / total_in).abs() < 1e-12);
        // Interior headwall cells (steeper than the limit on both Horn stencils) keep none.
        for row in 1..n / 3 - 1 {
            for col in 1..n - 1 {
                assert_eq!(kept[row * n + col], 0.0, "row {row} col {col}");
            }
        }
        // The foot of the wall gets more than its own snowfall.
        assert!(kept[(n / 3 + 1) * n + n / 2] > 1.5);
    }

    #[test]
    fn outside_the_domain_nothing_arrives() {
        let (n, dx) = (12, 100.0);
        let z = cirque(n, dx);
        let mut domain = vec![1.0; n * n];
        let mut snowfall = vec![1.0; n * n];
        for col in 0..n {
            domain[(n - 1) * n + col] = 0.0;
            snowfall[(n - 1) * n + col] = 0.0;
        }
        let mut kept = vec![0.0; n * n];
        SnowRedistribution::new(n, n, dx, 50.0, 1.0)
            .redistribute(&z, &domain, &snowfall, &mut kept);
        assert!(kept[(n - 1) * n..].iter().all(|&k| k == 0.0));
        let total_in: f64 = snowfall.iter().sum();
        assert!((kept.iter().sum::<f64>() - total_in).abs() < 1e-9 * total_in);
    }

    #[test]
    fn level_ground_keeps_its_own_snow() {
        let n = 5;
        let z = vec![2000.0; n * n];
        let snowfall = vec![0.8; n * n];
        let mut kept = vec![0.0; n * n];
        SnowRedistribution::new(n, n, 50.0, 45.0, 0.5).redistribute(
            &z,
            &vec![1.0; n * n],
            &snowfall,
            &mut kept,
        );
        // More than the holding depth, but nowhere lower to go: all stays.
        assert_eq!(kept, snowfall);
    }
}
