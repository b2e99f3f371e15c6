//! Ice flow by the 2-D shallow-ice approximation with Glen's law (n = 3), in the staggered-grid
//! flux form of Mahaffy (1976, J. Geophys. Res. 81(6):1059-1066), with an adaptive explicit
//! time step and outflow limiting that keeps thickness non-negative on steep beds.
//!
//! dH/dt = M - div(q), q = -D grad(s), s = b + H,
//! D = (Gamma H^5 + S H^3) |grad s|^2, Gamma = 2 A (rho g)^3 / 5 (Cuffey & Paterson 2010,
//! ch. 8), S = f_s (rho g)^3 for Weertman-type sliding u_b = f_s tau_b^3 / H with
//! tau_b = rho g H |grad s| (the form used by Budd, Keage & Blundy 1979; from memory): with
//! f_s in Pa^-3 m^2 s^-1, u_b is in m/s, and u_b H = S H^3 |grad s|^3 is the sliding flux.
//!
//! Scheme (the reference run of the project's science checks uses the same layout):
//! thickness on cell centres; D at cell corners from the mean thickness and the surface
//! gradient of the four surrounding cells; a face's D is the mean of its two corners. The
//! time step is `time_step_fraction * dx^2 / (4 D_max)`, recomputed every substep, the
//! von Neumann limit of forward Euler in 2-D (Hindmarsh & Payne 1996, Ann. Glaciol. 23, from
//! memory). Each face moves one signed amount of ice from one cell to its neighbour, so ice
//! is conserved to round-off. Where a cell's outgoing fluxes would remove more ice than it
//! holds (at margins and bedrock steps, the problem shown by Jarosch, Schoof & Anslow 2013,
//! The Cryosphere 7:229-240), all its outgoing fluxes are scaled down to what it holds; the
//! scaled flux is the one its neighbour receives, so conservation is kept.
//!
//! Work is limited to the bounding box of the ice, grown by one cell each substep, plus the
//! cells with positive balance: cost scales with the ice-covered area. State is `f64`: with
//! zero balance the volume drifts ~1e-15 (relative) over a century; merely rounding the state
//! to `f32` once a year already gives ~1e-8 (both measured in the reference checks), and
//! `f32` arithmetic in every substep would do worse. The step allocates nothing.

use serde::{Deserialize, Serialize};
use thiserror::Error;

use crate::ice::mass_balance::LinearBalance;
use crate::params::{check_range, ScenarioError};

/// Seconds per year used for unit conversion, as in Bueler et al. (2005, J. Glaciol.
/// 51(173)) (from memory); it reproduces their Test B t0 = 422.45 a.
pub const SECONDS_PER_YEAR: f64 = 31_556_926.0;

/// Gravitational acceleration, m s^-2 (common practice; standard gravity is 9.80665).
pub const GRAVITY_M_S2: f64 = 9.81;

/// Glen's flow-law exponent (Cuffey & Paterson 2010); fixed, the scheme is written for it.
pub const GLEN_EXPONENT: f64 = 3.0;

/// Flow parameters (the `flow` block of a scenario).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct FlowParams {
    /// Glen rate factor A, Pa^-3 s^-1, 1e-27 to 1e-22. Default 2.4e-24, temperate ice at
    /// 0 C (Cuffey & Paterson 2010, Table 3.4; value from memory).
    pub rate_factor_pa3_s: f64,
    /// Ice density, kg m^-3, 800 to 930. Default 910, the value of Bueler et al. 2005.
    pub ice_density_kg_m3: f64,
    /// Sliding coefficient f_s, Pa^-3 m^2 s^-1, 0 to 1e-18. Default 0 (no sliding); 5.7e-20
    /// is the value of Budd et al. 1979 used in simple glacier models (from memory).
    pub sliding_pa3_m2_s: f64,
    /// Target cell size of the ice grid, m, 1 to 2000. Default 100. The input grid is
    /// aggregated by the whole factor nearest to this over its cell size (at least 1): the
    /// shallow-ice approximation only holds over several ice thicknesses, and the stable
    /// time step grows with the square of the cell size.
    pub ice_cell_size_m: f64,
    /// Fraction of the stability limit dx^2/(4 D_max) used as time step, 0.01 to 1.
    /// Default 0.8.
    pub time_step_fraction: f64,
}

impl Default for FlowParams {
    fn default() -> Self {
        FlowParams {
            rate_factor_pa3_s: 2.4e-24,
            ice_density_kg_m3: 910.0,
            sliding_pa3_m2_s: 0.0,
            ice_cell_size_m: 100.0,
            time_step_fraction: 0.8,
        }
    }
}

impl FlowParams {
    /// Checks every number against its documented range.
    pub fn validate(&self) -> Result<(), ScenarioError> {
        check_range(
            "flow.rate_factor_pa3_s",
            self.rate_factor_pa3_s,
            1e-27,
            1e-22,
            "Pa^-3 s^-1",
        )?;
        check_range(
            "flow.ice_density_kg_m3",
            self.ice_density_kg_m3,
            800.0,
            930.0,
            "kg/m3",
        )?;
        check_range(
            "flow.sliding_pa3_m2_s",
            self.sliding_pa3_m2_s,
            0.0,
            1e-18,
            "Pa^-3 m2 s^-1",
        )?;
        check_range(
            "flow.ice_cell_size_m",
            self.ice_cell_size_m,
            1.0,
            2000.0,
            "m",
        )?;
        check_range(
            "flow.time_step_fraction",
            self.time_step_fraction,
            0.01,
            1.0,
            "",
        )?;
        Ok(())
    }

    /// The constants of the flux law, per year.
    pub fn constants(&self) -> FlowConstants {
        FlowConstants::new(
            self.rate_factor_pa3_s * SECONDS_PER_YEAR,
            self.ice_density_kg_m3,
            GRAVITY_M_S2,
            self.sliding_pa3_m2_s * SECONDS_PER_YEAR,
            self.time_step_fraction,
        )
    }
}

/// The constants the flux law needs, in year units.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FlowConstants {
    /// Gamma = 2 A (rho g)^3 / 5, m^-3 a^-1.
    pub deformation_m3_a: f64,
    /// S = f_s (rho g)^3, m^-1 a^-1.
    pub sliding_m_a: f64,
    /// Fraction of the stability limit used as time step.
    pub time_step_fraction: f64,
}

impl FlowConstants {
    /// From the rate factor (Pa^-3 a^-1), density, gravity, sliding (Pa^-3 m^2 a^-1).
    pub fn new(
        rate_factor_pa3_a: f64,
        ice_density_kg_m3: f64,
        gravity_m_s2: f64,
        sliding_pa3_m2_a: f64,
        time_step_fraction: f64,
    ) -> FlowConstants {
        let rho_g = ice_density_kg_m3 * gravity_m_s2;
        let rho_g_cubed = rho_g * rho_g * rho_g;
        FlowConstants {
            deformation_m3_a: 2.0 * rate_factor_pa3_a * rho_g_cubed / (GLEN_EXPONENT + 2.0),
            sliding_m_a: sliding_pa3_m2_a * rho_g_cubed,
            time_step_fraction,
        }
    }
}

/// Problems with the flow grid itself (the caller's inputs, not the physics).
#[derive(Debug, Clone, PartialEq, Error)]
pub enum FlowError {
    #[error("ice grid must be at least 3 x 3 cells, got {n_cols} x {n_rows}")]
    TooSmall { n_cols: usize, n_rows: usize },
    #[error("ice grid cell size must be positive and finite, got {0} m")]
    CellSize(f64),
    #[error("{layer} has {found} values, the ice grid has {expected} cells")]
    Length {
        layer: &'static str,
        found: usize,
        expected: usize,
    },
    #[error("bed elevation is not finite at cell {0}")]
    BedNotFinite(usize),
}

/// Inclusive cell rectangle.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct CellBox {
    pub row_min: usize,
    pub row_max: usize,
    pub col_min: usize,
    pub col_max: usize,
}

impl CellBox {
    fn union(self, other: CellBox) -> CellBox {
        CellBox {
            row_min: self.row_min.min(other.row_min),
            row_max: self.row_max.max(other.row_max),
            col_min: self.col_min.min(other.col_min),
            col_max: self.col_max.max(other.col_max),
        }
    }

    fn grown(self, n_cols: usize, n_rows: usize) -> CellBox {
        CellBox {
            row_min: self.row_min.saturating_sub(1),
            row_max: (self.row_max + 1).min(n_rows - 1),
            col_min: self.col_min.saturating_sub(1),
            col_max: (self.col_max + 1).min(n_cols - 1),
        }
    }

    /// Number of cells inside.
    pub fn n_cells(&self) -> usize {
        (self.row_max - self.row_min + 1) * (self.col_max - self.col_min + 1)
    }
}

/// Bounding box of the cells where `keep(cell_idx)` holds.
fn bounding_box(n_cols: usize, n_rows: usize, keep: impl Fn(usize) -> bool) -> Option<CellBox> {
    let mut found: Option<CellBox> = None;
    for row in 0..n_rows {
        let start = row * n_cols;
        let first = (0..n_cols).find(|&c| keep(start + c));
        if let Some(first) = first {
            let last = (first..n_cols)
                .rev()
                .find(|&c| keep(start + c))
                .unwrap_or(first);
            let this = CellBox {
                row_min: row,
                row_max: row,
                col_min: first,
                col_max: last,
            };
            found = Some(found.map_or(this, |b| b.union(this)));
        }
    }
    found
}

/// Sum in four fixed lanes: vectorises, and the order (so the result) is the same on
/// every platform.
/// `x.max(0.0)` as a compare and select: `f64::max` must ignore NaN, which wasm's `f64.max`
/// does not, so in wasm it becomes a branchy sequence that keeps the loop scalar.
#[inline(always)]
pub(crate) fn positive_part(x: f64) -> f64 {
    if x > 0.0 {
        x
    } else {
        0.0
    }
}

/// `x.min(0.0)` as a compare and select (see [`positive_part`]).
#[inline(always)]
pub(crate) fn negative_part(x: f64) -> f64 {
    if x < 0.0 {
        x
    } else {
        0.0
    }
}

fn sum_lanes(values: &[f64]) -> f64 {
    let mut lanes = [0.0_f64; 4];
    let chunks = values.chunks_exact(4);
    let tail: f64 = chunks.remainder().iter().sum();
    for chunk in chunks {
        for (lane, &v) in lanes.iter_mut().zip(chunk) {
            *lane += v;
        }
    }
    (lanes[0] + lanes[1]) + (lanes[2] + lanes[3]) + tail
}

/// Largest value (0 for an empty slice; values are non-negative), in four lanes.
fn max_lanes(values: &[f64]) -> f64 {
    let mut lanes = [0.0_f64; 4];
    let chunks = values.chunks_exact(4);
    let tail = chunks.remainder().iter().fold(0.0_f64, |m, &v| m.max(v));
    for chunk in chunks {
        for (lane, &v) in lanes.iter_mut().zip(chunk) {
            *lane = if v > *lane { v } else { *lane };
        }
    }
    lanes.iter().fold(tail, |m, &v| m.max(v))
}

/// What one call to [`SiaStepper::advance`] did.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct AdvanceReport {
    /// Explicit substeps taken.
    pub substeps: u32,
    /// Largest corner diffusivity met, m^2 a^-1.
    pub max_diffusivity_m2_a: f64,
    /// Largest ratio of a substep to its stability limit dx^2/(4 D_max); never above 1.
    pub max_step_over_limit: f64,
    /// Ice volume added (positive) or removed by the surface balance, m^3. With the flux
    /// form, the change of volume equals this to round-off.
    pub balance_volume_m3: f64,
    /// Cells updated, summed over substeps (cost measure).
    pub cell_updates: u64,
}

/// The shallow-ice stepper: bed, open-cell mask and scratch buffers for one ice grid.
/// Thickness is the caller's state, passed to [`SiaStepper::advance`].
#[derive(Clone, Debug)]
pub struct SiaStepper {
    n_cols: usize,
    n_rows: usize,
    cell_size_m: f64,
    constants: FlowConstants,
    bed_m: Vec<f64>,
    /// 1 where ice may lie, 0 at closed cells (no data); multiplies fluxes and balance.
    open: Vec<f64>,
    /// Share of each cell's accumulation the balance keeps (the glacier domain, 0 to 1;
    /// 1 everywhere unless set). Ablation applies everywhere ice lies.
    domain: Vec<f64>,
    surface_m: Vec<f64>,
    /// Corner (r, c), between cells r, r+1 and c, c+1, at `(r + 1) * (n_cols + 1) + c + 1`:
    /// a padding row and column hold the corners north and west of the grid.
    corner_diffusivity: Vec<f64>,
    /// Ice moved east across the east face of cell (r, c) in one substep, metres of
    /// thickness, at `r * (n_cols + 1) + c + 1`; index `r * (n_cols + 1)` is the grid's
    /// west boundary and stays zero.
    flux_east: Vec<f64>,
    /// Ice moved south across the south face of cell (r, c), at `(r + 1) * n_cols + c`;
    /// row 0 is the grid's north boundary and stays zero.
    flux_south: Vec<f64>,
    /// Share of its outgoing fluxes each cell can supply; cell i at index i + 1, with one
    /// padding value at each end.
    outflow_scale: Vec<f64>,
    /// One row of per-cell balance additions, summed after the row.
    row_scratch: Vec<f64>,
}

impl SiaStepper {
    /// A stepper for a grid of `n_cols x n_rows` square cells. `open[i]` false closes a cell
    /// to ice (no data); its bed value is still used for gradients, so fill it sensibly.
    pub fn new(
        n_cols: usize,
        n_rows: usize,
        cell_size_m: f64,
        bed_m: Vec<f64>,
        open: &[bool],
        constants: FlowConstants,
    ) -> Result<SiaStepper, FlowError> {
        if n_cols < 3 || n_rows < 3 {
            return Err(FlowError::TooSmall { n_cols, n_rows });
        }
        if !(cell_size_m.is_finite() && cell_size_m > 0.0) {
            return Err(FlowError::CellSize(cell_size_m));
        }
        let n_cells = n_cols * n_rows;
        for (layer, found) in [("bed", bed_m.len()), ("open mask", open.len())] {
            if found != n_cells {
                return Err(FlowError::Length {
                    layer,
                    found,
                    expected: n_cells,
                });
            }
        }
        if let Some(idx) = bed_m.iter().position(|z| !z.is_finite()) {
            return Err(FlowError::BedNotFinite(idx));
        }
        Ok(SiaStepper {
            n_cols,
            n_rows,
            cell_size_m,
            constants,
            bed_m,
            open: open.iter().map(|&o| if o { 1.0 } else { 0.0 }).collect(),
            domain: vec![1.0; n_cells],
            surface_m: vec![0.0; n_cells],
            corner_diffusivity: vec![0.0; (n_rows + 1) * (n_cols + 1)],
            flux_east: vec![0.0; n_rows * (n_cols + 1)],
            flux_south: vec![0.0; (n_rows + 1) * n_cols],
            outflow_scale: vec![0.0; n_cells + 2],
            row_scratch: vec![0.0; n_cols],
        })
    }

    pub fn n_cols(&self) -> usize {
        self.n_cols
    }

    pub fn n_rows(&self) -> usize {
        self.n_rows
    }

    pub fn cell_size_m(&self) -> f64 {
        self.cell_size_m
    }

    pub fn bed_m(&self) -> &[f64] {
        &self.bed_m
    }

    /// Sets the share of accumulation each cell keeps (the glacier domain, values 0 to 1).
    ///
    /// # Panics
    /// If `domain` does not have one value per cell (a programming error).
    pub fn set_domain(&mut self, domain: &[f64]) {
        assert_eq!(
            domain.len(),
            self.domain.len(),
            "domain must cover the ice grid"
        );
        for (d, &v) in self.domain.iter_mut().zip(domain) {
            *d = v.clamp(0.0, 1.0);
        }
    }

    /// Share of accumulation each cell keeps.
    pub fn domain(&self) -> &[f64] {
        &self.domain
    }

    /// Surface elevation of a thickness field, m (bed plus thickness).
    pub fn surface_of(&self, thickness_m: &[f64], surface_m: &mut Vec<f64>) {
        surface_m.clear();
        surface_m.extend(self.bed_m.iter().zip(thickness_m).map(|(&b, &h)| b + h));
    }

    /// True where ice may lie.
    pub fn is_open(&self, cell_idx: usize) -> bool {
        self.open[cell_idx] > 0.0
    }

    /// Total ice volume of a thickness field on this grid, m^3.
    pub fn volume_m3(&self, thickness_m: &[f64]) -> f64 {
        thickness_m.iter().sum::<f64>() * self.cell_size_m * self.cell_size_m
    }

    /// Bounding box of the ice (H > 0), `None` when there is none.
    pub fn ice_box(&self, thickness_m: &[f64]) -> Option<CellBox> {
        bounding_box(self.n_cols, self.n_rows, |i| thickness_m[i] > 0.0)
    }

    /// Advances `thickness_m` by `duration_a` years under the balance profile `balance`.
    ///
    /// # Panics
    /// If `thickness_m` does not have one value per cell (a programming error).
    pub fn advance(
        &mut self,
        thickness_m: &mut [f64],
        duration_a: f64,
        balance: &LinearBalance,
    ) -> AdvanceReport {
        self.advance_with(thickness_m, duration_a, balance, None)
    }

    /// As [`SiaStepper::advance`], with the accumulation given per cell (m of ice per year,
    /// e.g. after snow redistribution) in place of the profile's positive part times the
    /// domain; the profile's ablation still follows the surface through the year.
    ///
    /// # Panics
    /// If a slice does not have one value per cell (a programming error).
    pub fn advance_with(
        &mut self,
        thickness_m: &mut [f64],
        duration_a: f64,
        balance: &LinearBalance,
        accumulation_m_per_a: Option<&[f64]>,
    ) -> AdvanceReport {
        if let Some(acc) = accumulation_m_per_a {
            assert_eq!(
                acc.len(),
                self.bed_m.len(),
                "accumulation must cover the ice grid"
            );
        }
        assert_eq!(
            thickness_m.len(),
            self.bed_m.len(),
            "thickness must cover the ice grid"
        );
        let (n_cols, n_rows) = (self.n_cols, self.n_rows);
        let mut report = AdvanceReport::default();
        // Cells outside the ice that gain ice this year; their surface is the bed there.
        let gaining_box = match accumulation_m_per_a {
            Some(acc) => bounding_box(n_cols, n_rows, |i| self.open[i] > 0.0 && acc[i] > 0.0),
            None => bounding_box(n_cols, n_rows, |i| {
                self.open[i] > 0.0
                    && self.domain[i] > 0.0
                    && balance.rate_m_per_a(self.bed_m[i]) > 0.0
            }),
        };
        let mut ice_box = self.ice_box(thickness_m);
        let mut elapsed_a = 0.0;
        while elapsed_a < duration_a {
            let region = match (ice_box.map(|b| b.grown(n_cols, n_rows)), gaining_box) {
                (Some(a), Some(b)) => a.union(b),
                (Some(a), None) => a,
                (None, Some(b)) => b,
                (None, None) => break,
            };
            let max_diffusivity = self.compute_diffusivity(thickness_m, region);
            let limit_a = if max_diffusivity > 0.0 {
                self.cell_size_m * self.cell_size_m / (4.0 * max_diffusivity)
            } else {
                f64::INFINITY
            };
            let dt_a = (self.constants.time_step_fraction * limit_a).min(duration_a - elapsed_a);
            report.max_diffusivity_m2_a = report.max_diffusivity_m2_a.max(max_diffusivity);
            report.max_step_over_limit = report.max_step_over_limit.max(dt_a / limit_a);
            self.compute_fluxes(region, dt_a);
            self.limit_outflow(thickness_m, region);
            let (added_m, new_box) =
                self.apply(thickness_m, region, dt_a, balance, accumulation_m_per_a);
            report.balance_volume_m3 += added_m * self.cell_size_m * self.cell_size_m;
            report.cell_updates += region.n_cells() as u64;
            report.substeps += 1;
            ice_box = new_box;
            // The last substep ends the year exactly.
            elapsed_a = if dt_a >= duration_a - elapsed_a {
                duration_a
            } else {
                elapsed_a + dt_a
            };
        }
        report
    }

    /// Surface over the region and corner diffusivities; returns the largest.
    fn compute_diffusivity(&mut self, thickness_m: &[f64], region: CellBox) -> f64 {
        let n_cols = self.n_cols;
        let stride = n_cols + 1;
        let (c0, c1) = (region.col_min, region.col_max);
        for row in region.row_min..=region.row_max {
            let span = row * n_cols + c0..row * n_cols + c1 + 1;
            let surface = &mut self.surface_m[span.clone()];
            for ((s, &b), &h) in surface
                .iter_mut()
                .zip(&self.bed_m[span.clone()])
                .zip(&thickness_m[span])
            {
                *s = b + h;
            }
        }
        // Corners next to the region touch only ice-free cells (the region holds a ring of
        // ice-free cells around all ice), so their diffusivity is zero.
        let corners = &mut self.corner_diffusivity;
        for stored_row in [region.row_min, region.row_max + 1] {
            corners[stored_row * stride + c0..stored_row * stride + c1 + 2].fill(0.0);
        }
        for row in region.row_min..=region.row_max {
            corners[(row + 1) * stride + c0] = 0.0;
            corners[(row + 1) * stride + c1 + 1] = 0.0;
        }
        let gamma = self.constants.deformation_m3_a;
        let sliding = self.constants.sliding_m_a;
        let inv_two_dx = 0.5 / self.cell_size_m;
        let mut max_diffusivity = 0.0_f64;
        let width = c1 - c0;
        for row in region.row_min..region.row_max {
            let north = row * n_cols + c0;
            let south = north + n_cols;
            let h_n = &thickness_m[north..north + width + 1];
            let h_s = &thickness_m[south..south + width + 1];
            let s_n = &self.surface_m[north..north + width + 1];
            let s_s = &self.surface_m[south..south + width + 1];
            let out =
                &mut corners[(row + 1) * stride + c0 + 1..(row + 1) * stride + c0 + 1 + width];
            for k in 0..width {
                let h = 0.25 * (h_n[k] + h_n[k + 1] + h_s[k] + h_s[k + 1]);
                let ds_dx = (s_n[k + 1] + s_s[k + 1] - s_n[k] - s_s[k]) * inv_two_dx;
                let ds_dy = (s_s[k] + s_s[k + 1] - s_n[k] - s_n[k + 1]) * inv_two_dx;
                let h3 = h * h * h;
                out[k] = (gamma * h3 * h * h + sliding * h3) * (ds_dx * ds_dx + ds_dy * ds_dy);
            }
            max_diffusivity = max_diffusivity.max(max_lanes(out));
        }
        max_diffusivity
    }

    /// Face fluxes over one substep, as metres of thickness moved (before limiting).
    fn compute_fluxes(&mut self, region: CellBox, dt_a: f64) {
        let n_cols = self.n_cols;
        let stride = n_cols + 1;
        let (c0, c1) = (region.col_min, region.col_max);
        let width = c1 - c0;
        // Metres of thickness per unit face diffusivity and unit surface difference; the
        // 0.5 averages the two corners of a face.
        let factor = -0.5 * dt_a / (self.cell_size_m * self.cell_size_m);
        let corners = &self.corner_diffusivity;
        for row in region.row_min..=region.row_max {
            let cells = row * n_cols + c0;
            let faces = row * stride + c0;
            // Faces on the region's edge carry nothing (see `compute_diffusivity`).
            self.flux_east[faces] = 0.0;
            self.flux_east[faces + width + 1] = 0.0;
            let d_north = &corners[faces + 1..faces + 1 + width];
            let d_south = &corners[faces + stride + 1..faces + stride + 1 + width];
            let surface = &self.surface_m[cells..cells + width + 1];
            let open = &self.open[cells..cells + width + 1];
            let out = &mut self.flux_east[faces + 1..faces + 1 + width];
            for k in 0..width {
                let ds = surface[k + 1] - surface[k];
                out[k] = factor * (d_north[k] + d_south[k]) * ds * (open[k] * open[k + 1]);
            }
        }
        let n = width + 1;
        self.flux_south[region.row_min * n_cols + c0..][..n].fill(0.0);
        self.flux_south[(region.row_max + 1) * n_cols + c0..][..n].fill(0.0);
        for row in region.row_min..region.row_max {
            let cells = row * n_cols + c0;
            let corner_row = (row + 1) * stride + c0;
            let d_west = &corners[corner_row..corner_row + n];
            let d_east = &corners[corner_row + 1..corner_row + 1 + n];
            let s_north = &self.surface_m[cells..cells + n];
            let s_south = &self.surface_m[cells + n_cols..cells + n_cols + n];
            let o_north = &self.open[cells..cells + n];
            let o_south = &self.open[cells + n_cols..cells + n_cols + n];
            let out = &mut self.flux_south[cells + n_cols..cells + n_cols + n];
            for k in 0..n {
                let ds = s_south[k] - s_north[k];
                out[k] = factor * (d_west[k] + d_east[k]) * ds * (o_north[k] * o_south[k]);
            }
        }
    }

    /// Fraction of its outgoing fluxes each cell can supply: 1, or what it holds over what
    /// would leave it.
    fn limit_outflow(&mut self, thickness_m: &[f64], region: CellBox) {
        let n_cols = self.n_cols;
        let stride = n_cols + 1;
        let (c0, c1) = (region.col_min, region.col_max);
        let n = c1 - c0 + 1;
        for row in region.row_min..=region.row_max {
            let cells = row * n_cols + c0;
            let east = &self.flux_east[row * stride + c0..][..n + 1];
            let north = &self.flux_south[cells..][..n];
            let south = &self.flux_south[cells + n_cols..][..n];
            let h = &thickness_m[cells..][..n];
            let scale = &mut self.outflow_scale[cells + 1..][..n];
            for k in 0..n {
                let outflow = positive_part(east[k + 1])
                    + positive_part(-east[k])
                    + positive_part(south[k])
                    + positive_part(-north[k]);
                scale[k] = if outflow > h[k] { h[k] / outflow } else { 1.0 };
            }
        }
    }

    /// Applies the limited fluxes and the balance; returns the thickness added by the
    /// balance (summed over cells, m) and the new bounding box of the ice. A face's limited
    /// flux is computed by the same expression in both of its cells, so what one loses the
    /// other gains exactly.
    fn apply(
        &mut self,
        thickness_m: &mut [f64],
        region: CellBox,
        dt_a: f64,
        balance: &LinearBalance,
        accumulation_m_per_a: Option<&[f64]>,
    ) -> (f64, Option<CellBox>) {
        let n_cols = self.n_cols;
        let n_rows = self.n_rows;
        let stride = n_cols + 1;
        let (c0, c1) = (region.col_min, region.col_max);
        let n = c1 - c0 + 1;
        let mut added_m = 0.0;
        let mut ice_box: Option<CellBox> = None;
        // Scale of the donor of a face: the cell on the side the flux leaves.
        let limited = |flux: f64, scale_from: f64, scale_to: f64| {
            flux * if flux > 0.0 { scale_from } else { scale_to }
        };
        for row in region.row_min..=region.row_max {
            let cells = row * n_cols + c0;
            let east = &self.flux_east[row * stride + c0..][..n + 1];
            let north = &self.flux_south[cells..][..n];
            let south = &self.flux_south[cells + n_cols..][..n];
            // Scales of this row from one cell west to one cell east of the region (cell i at
            // index i + 1): the values beyond the region are stale or padding but finite, and
            // multiply faces that carry zero flux.
            let scale = &self.outflow_scale[cells..][..n + 2];
            // Scales of the neighbours across the north and south faces; at the grid edge
            // those faces carry zero flux, so any value serves.
            let scale_north = &self.outflow_scale[if row > 0 {
                cells + 1 - n_cols
            } else {
                cells + 1
            }..][..n];
            let scale_south = &self.outflow_scale[if row + 1 < n_rows {
                cells + 1 + n_cols
            } else {
                cells + 1
            }..][..n];
            let surface = &self.surface_m[cells..][..n];
            let open = &self.open[cells..][..n];
            let domain = &self.domain[cells..][..n];
            let accumulation = accumulation_m_per_a.map(|acc| &acc[cells..][..n]);
            let h = &mut thickness_m[cells..][..n];
            let added = &mut self.row_scratch[..n];
            for k in 0..n {
                let (scale_west, scale_here, scale_east) = (scale[k], scale[k + 1], scale[k + 2]);
                let divergence = limited(east[k + 1], scale_here, scale_east)
                    - limited(east[k], scale_west, scale_here)
                    + limited(south[k], scale_here, scale_south[k])
                    - limited(north[k], scale_north[k], scale_here);
                let after_flow = h[k] - divergence;
                // Accumulation only inside the domain; where the domain is 1 this is the
                // profile's rate exactly (one of the two parts is zero).
                let local = balance.rate_m_per_a(surface[k]);
                let rate = match accumulation {
                    None => (negative_part(local) + positive_part(local) * domain[k]) * open[k],
                    Some(acc) => negative_part(local) * open[k] + acc[k],
                };
                let new_h = positive_part(after_flow + rate * dt_a);
                added[k] = new_h - after_flow;
                h[k] = new_h;
            }
            added_m += sum_lanes(added);
            // Kept out of the loop above so that it vectorises.
            if let Some(first) = h.iter().position(|&x| x > 0.0) {
                let last = h.iter().rposition(|&x| x > 0.0).unwrap_or(first);
                let this = CellBox {
                    row_min: row,
                    row_max: row,
                    col_min: c0 + first,
                    col_max: c0 + last,
                };
                ice_box = Some(ice_box.map_or(this, |b| b.union(this)));
            }
        }
        (added_m, ice_box)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn flat_stepper(n: usize, dx: f64) -> SiaStepper {
        let constants = FlowParams::default().constants();
        SiaStepper::new(n, n, dx, vec![0.0; n * n], &vec![true; n * n], constants).expect("grid")
    }

    #[test]
    fn gamma_matches_the_science_checks_value() {
        // SCIENCE-CHECKS section 2 [C]: A = 1e-16 Pa^-3 a^-1, rho 910, g 9.81 -> 2.8457e-5.
        let c = FlowConstants::new(1e-16, 910.0, 9.81, 0.0, 0.8);
        assert!((c.deformation_m3_a / 2.8457e-5 - 1.0).abs() < 1e-4);
        // A(0 C) = 2.4e-24 Pa^-3 s^-1 -> 2.155e-5 m^-3 a^-1.
        let c = FlowParams::default().constants();
        assert!((c.deformation_m3_a / 2.155e-5 - 1.0).abs() < 1e-3);
    }

    #[test]
    fn a_single_column_spreads_conservatively_and_stays_non_negative() {
        let mut stepper = flat_stepper(21, 100.0);
        let mut h = vec![0.0; 21 * 21];
        h[10 * 21 + 10] = 300.0;
        let v0 = stepper.volume_m3(&h);
        let report = stepper.advance(&mut h, 5.0, &LinearBalance::ZERO);
        assert!(report.substeps > 1);
        assert!(report.max_step_over_limit <= 1.0);
        assert!(h.iter().all(|&x| x >= 0.0));
        assert!(((stepper.volume_m3(&h) - v0) / v0).abs() < 1e-13);
        assert!(h[10 * 21 + 10] < 300.0);
    }

    #[test]
    fn no_ice_and_no_positive_balance_is_a_no_op() {
        let mut stepper = flat_stepper(5, 100.0);
        let mut h = vec![0.0; 25];
        let melt = LinearBalance {
            ela_m: 1000.0,
            ..LinearBalance::ZERO
        };
        let report = stepper.advance(&mut h, 1.0, &melt);
        assert_eq!(report.substeps, 0);
        assert!(h.iter().all(|&x| x == 0.0));
    }

    #[test]
    fn bad_grids_are_typed_errors() {
        let c = FlowParams::default().constants();
        assert!(matches!(
            SiaStepper::new(2, 5, 10.0, vec![0.0; 10], &[true; 10], c),
            Err(FlowError::TooSmall { .. })
        ));
        assert!(matches!(
            SiaStepper::new(3, 3, 10.0, vec![0.0; 8], &[true; 9], c),
            Err(FlowError::Length { .. })
        ));
    }
}
