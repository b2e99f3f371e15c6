//! Seed rain by an O(N) convolution: each kernel (`kernels`) written as a sum of Gaussians,
//! applied on a pyramid of grids.
//!
//! Each Gaussian component is applied as a separable pair of 1-D filters with cell-integrated
//! taps on a pyramid of coarser grids: a component goes to the coarsest level where it
//! still spans at least [`MIN_SIGMA_CELLS`] cells, so every component costs about the same
//! number of operations per coarse cell whatever its width, and wide components are nearly
//! free; components that need no filter on their level share one scaled copy. Sums go up
//! the pyramid by full weighting (the transpose of bilinear interpolation, as multigrid
//! restriction) and come down by bilinear interpolation, so a source keeps its position
//! within a coarse cell to first order; the variance the transfers add is taken off each
//! component (common practice, no source). The error against a direct convolution is
//! measured in the reference checks: below 0.5 % relative L1, a tenth of what block sums
//! gave at the same level placement.

use crate::plants::kernels::Kernel;

/// A component is placed on the coarsest pyramid level where its standard deviation is at
/// least this many level cells. With full-weighting transfers 1.25 keeps the error against
/// a direct convolution near 0.4 % (2.5 gave 0.2 % at twice the filter work; reference
/// checks).
pub const MIN_SIGMA_CELLS: f64 = 1.25;

/// Filter taps reach this many standard deviations; each axis then cuts 4.7e-4 of a
/// component's mass (2 Phi(-3.5)), which the taps are renormalised for: the error against
/// a direct convolution moves by under 0.01 % from 4 sigma (reference checks), for an
/// eighth fewer taps.
pub const TAP_REACH_SIGMAS: f64 = 3.5;

/// Narrower components (in fine cells) stay in their cell.
const IDENTITY_SIGMA_CELLS: f64 = 0.15;

/// What happens to seed that would land beyond the grid edge.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Boundary {
    /// It is lost (the landscape continues beyond the grid but is not modelled).
    Absorbing,
    /// It is mirrored back (a symmetry plane, used for one-row strips).
    Reflecting,
}

/// Error function (Abramowitz & Stegun 7.1.26; absolute error below 1.5e-7).
fn erf(x: f64) -> f64 {
    let sign = x.signum();
    let x = x.abs();
    let t = 1.0 / (1.0 + 0.327_591_1 * x);
    let poly = t
        * (0.254_829_592
            + t * (-0.284_496_736
                + t * (1.421_413_741 + t * (-1.453_152_027 + t * 1.061_405_429))));
    sign * (1.0 - poly * libm::exp(-x * x))
}

/// Cell-integrated 1-D Gaussian taps (sigma in cells), centre at index `radius`, summing to 1,
/// cut at `max_radius` cells.
fn gaussian_taps(sigma_cells: f64, max_radius: usize) -> Vec<f32> {
    let full_radius = (TAP_REACH_SIGMAS * sigma_cells).ceil().max(1.0) as usize;
    let radius = full_radius.min(max_radius.max(1));
    let cdf = |x: f64| 0.5 * (1.0 + erf(x / (sigma_cells * std::f64::consts::SQRT_2)));
    let tap = |k: f64| cdf(k + 0.5) - cdf(k - 0.5);
    // Normalise by the sum of the uncut taps: what the cut drops lies beyond the grid.
    let total: f64 = (-(full_radius as i64)..=full_radius as i64)
        .map(|k| tap(k as f64))
        .sum();
    // Both halves from the positive side, so the filters may pair them.
    (-(radius as i64)..=radius as i64)
        .map(|k| (tap(k.unsigned_abs() as f64) / total) as f32)
        .collect()
}

/// Shapes of the pyramid's grids: level j has cells of `base_factor * 2^j` fine cells.
#[derive(Clone, Debug)]
struct LevelShape {
    factor: usize,
    n_cols: usize,
    n_rows: usize,
    offset: usize,
}

fn pyramid_shapes(n_cols: usize, n_rows: usize, base_factor: usize) -> Vec<LevelShape> {
    let mut shapes = Vec::new();
    let mut factor = base_factor;
    let mut offset = 0;
    loop {
        let shape = LevelShape {
            factor,
            n_cols: n_cols.div_ceil(factor),
            n_rows: n_rows.div_ceil(factor),
            offset,
        };
        offset += shape.n_cols * shape.n_rows;
        shapes.push(shape);
        let next = factor * 2;
        // A one-row strip keeps coarsening along its length.
        if n_cols.max(n_rows).div_ceil(next) < 4 || next > 4096 {
            break;
        }
        factor = next;
    }
    shapes
}

/// Variance (fine cells^2, per axis) that moving a sum from fine cells up to level `level`
/// and back down adds: each bilinear interpolation step, twice, since each restriction
/// step up is its transpose.
fn transfer_variance(shapes: &[LevelShape], level: usize) -> f64 {
    // Moving down by a factor f onto cells of size b spreads a coarse value over the fine
    // cell centres (half a cell off the tent's nodes) of a tent of half-width f b: its
    // mass has variance (f b)^2 / 6 + b^2 / 12.
    let step = |f: f64, b: f64| (f * b) * (f * b) / 6.0 + b * b / 12.0;
    let mut interpolation = 0.0;
    for shape in &shapes[..level] {
        interpolation += step(2.0, shape.factor as f64);
    }
    let base = shapes[0].factor as f64;
    if base > 1.0 {
        interpolation += step(base, 1.0);
    }
    2.0 * interpolation
}

#[derive(Clone, Debug)]
struct Component {
    level: usize,
    weight: f32,
    taps: Vec<f32>,
}

/// Seed rain of one kernel on one grid: `apply` convolves seed production with the kernel.
#[derive(Clone, Debug)]
pub struct DispersalOperator {
    n_cols: usize,
    n_rows: usize,
    base_factor: usize,
    boundary: Boundary,
    n_levels: usize,
    /// Weight of components too narrow to leave their fine cell.
    identity_weight: f32,
    /// Per level, the summed weight of components that need no filter there (their variance
    /// is all in the transfers): one scaled copy instead of one per component.
    level_identity_weight: Vec<f32>,
    components: Vec<Component>,
    /// Filter only where seed can reach ([`filter`]); off only to check that it changes
    /// nothing.
    skip_empty: bool,
}

impl DispersalOperator {
    /// Prepares the convolution of `kernel` on an `n_cols` x `n_rows` grid of `cell_size_m`
    /// cells. `base_factor` (a power of two) is the finest block size the filters run on: 1
    /// for full resolution, 2 or more to trade short-range detail for speed.
    pub fn new(
        kernel: &Kernel,
        cell_size_m: f64,
        n_cols: usize,
        n_rows: usize,
        base_factor: usize,
        boundary: Boundary,
    ) -> DispersalOperator {
        let base_factor = base_factor.max(1).next_power_of_two();
        let shapes = pyramid_shapes(n_cols, n_rows, base_factor);
        let mut components = Vec::new();
        let mut identity_weight = 0.0f64;
        let mut level_identity_weight = vec![0.0f64; shapes.len()];
        for (weight, sigma_m) in kernel.gaussian_mixture() {
            let sigma_cells = sigma_m / cell_size_m;
            let mut level = 0;
            while level + 1 < shapes.len()
                && sigma_cells / shapes[level + 1].factor as f64 >= MIN_SIGMA_CELLS
            {
                level += 1;
            }
            let factor = shapes[level].factor as f64;
            if factor == 1.0 && sigma_cells < IDENTITY_SIGMA_CELLS {
                identity_weight += weight;
                continue;
            }
            // Target: the cell-integrated kernel's variance, sigma^2 + 1/12 fine cells^2.
            let level_variance = (sigma_cells * sigma_cells + 1.0 / 12.0
                - transfer_variance(&shapes, level))
                / (factor * factor)
                - 1.0 / 12.0;
            let shape = &shapes[level];
            if level_variance <= 1e-4 {
                level_identity_weight[level] += weight;
                continue;
            }
            components.push(Component {
                level,
                weight: weight as f32,
                taps: gaussian_taps(level_variance.sqrt(), shape.n_cols.max(shape.n_rows)),
            });
        }
        let n_levels = components
            .iter()
            .map(|c| c.level + 1)
            .chain(
                level_identity_weight
                    .iter()
                    .enumerate()
                    .filter(|(_, &w)| w > 0.0)
                    .map(|(level, _)| level + 1),
            )
            .max()
            .unwrap_or(1);
        // Grouped by level (stably, so each level sums its components in mixture order),
        // for `apply` to pass over a level's rows once for all its components.
        components.sort_by_key(|c| c.level);
        let level_identity_weight = level_identity_weight[..n_levels]
            .iter()
            .map(|&w| w as f32)
            .collect();
        DispersalOperator {
            n_cols,
            n_rows,
            base_factor,
            boundary,
            n_levels,
            identity_weight: identity_weight as f32,
            level_identity_weight,
            components,
            skip_empty: true,
        }
    }

    /// Number of filtered Gaussian components and pyramid levels used (cost measures).
    pub fn cost(&self) -> (usize, usize) {
        (self.components.len(), self.n_levels)
    }

    /// Scratch memory for this operator (and any other on the same grid and base factor).
    pub fn scratch(&self) -> DispersalScratch {
        DispersalScratch::new(self.n_cols, self.n_rows, self.base_factor)
    }

    /// `rain[i]` = seeds landing in cell i from `production` (seeds leaving each cell).
    /// Allocates nothing; `scratch` must come from an operator on the same grid.
    pub fn apply(&self, production: &[f32], rain: &mut [f32], scratch: &mut DispersalScratch) {
        self.apply_rows(production, rain, scratch, None);
    }

    /// [`Self::apply`], exact only in the rows where `needed_rows` (one flag a row) is set:
    /// level rows that no needed row interpolates from are not filtered, and the other
    /// rows of `rain` hold values to be ignored.
    pub fn apply_rows(
        &self,
        production: &[f32],
        rain: &mut [f32],
        scratch: &mut DispersalScratch,
        needed_rows: Option<&[bool]>,
    ) {
        let n = self.n_cols * self.n_rows;
        assert!(production.len() == n, "grid size");
        let n_cols = self.n_cols;
        self.apply_rows_from(
            |row, out| out.copy_from_slice(&production[row * n_cols..(row + 1) * n_cols]),
            rain,
            scratch,
            needed_rows,
        );
    }

    /// [`Self::apply_rows`] with the production written row by row by `source(row, out)`,
    /// so that a caller need not hold a whole production layer: each row is summed into
    /// the pyramid while it is in cache. The first pass over the rows visits every row in
    /// order; `source` may be called again for some rows, in increasing order, and must
    /// write the same values each time.
    pub fn apply_rows_from<F: FnMut(usize, &mut [f32])>(
        &self,
        mut source: F,
        rain: &mut [f32],
        scratch: &mut DispersalScratch,
        needed_rows: Option<&[bool]>,
    ) {
        let n = self.n_cols * self.n_rows;
        assert!(rain.len() == n, "grid size");
        assert!(
            scratch.n_cols == self.n_cols
                && scratch.n_rows == self.n_rows
                && scratch.base_factor == self.base_factor,
            "scratch from another grid"
        );
        let DispersalScratch {
            shapes,
            sums,
            accum,
            vertical,
            line,
            row_masks,
            spans,
            fine_row,
            ..
        } = scratch;
        // Per level, the rows some needed row below reads through the interpolation.
        let masked = if let Some(needed) = needed_rows {
            assert!(needed.len() == self.n_rows, "one flag a row");
            row_masks.fill(false);
            let mut below_start = 0;
            for (j, shape) in shapes.iter().enumerate().take(self.n_levels) {
                let start = mask_start(shapes, j);
                let (lower, upper) = row_masks.split_at_mut(start);
                let below = if j == 0 {
                    needed
                } else {
                    &lower[below_start..start]
                };
                let factor = if j == 0 { shape.factor } else { 2 };
                let factor_y = if shape.n_rows == below.len() {
                    1
                } else {
                    factor
                };
                let mask = &mut upper[..shape.n_rows];
                for (row, _) in below.iter().enumerate().filter(|(_, &b)| b) {
                    let (r0, r1, _) = coarse_position(row, shape.n_rows, factor_y);
                    mask[r0] = true;
                    mask[r1] = true;
                }
                below_start = start;
            }
            true
        } else {
            false
        };
        // Sums up the pyramid.
        let base_sums = &mut sums[..shapes[0].n_cols * shapes[0].n_rows];
        restrict_rows(
            &mut source,
            fine_row,
            self.n_cols,
            self.n_rows,
            &shapes[0],
            base_sums,
            line,
        );
        if base_sums.iter().all(|&s| s == 0.0) {
            // No seed at all (production is never negative): every filter and transfer
            // would give zeros.
            rain.fill(0.0);
            return;
        }
        for j in 1..self.n_levels {
            let (lower, upper) = sums.split_at_mut(shapes[j].offset);
            restrict(
                &lower[shapes[j - 1].offset..],
                shapes[j - 1].n_cols,
                shapes[j - 1].n_rows,
                &LevelShape {
                    factor: 2,
                    ..shapes[j].clone()
                },
                &mut upper[..shapes[j].n_cols * shapes[j].n_rows],
                line,
            );
        }
        // Each component filtered on its level.
        for (j, &w) in self.level_identity_weight.iter().enumerate() {
            let shape = &shapes[j];
            let range = shape.offset..shape.offset + shape.n_cols * shape.n_rows;
            for (a, &s) in accum[range.clone()].iter_mut().zip(&sums[range]) {
                *a = w * s;
            }
        }
        for group in self.components.chunk_by(|a, b| a.level == b.level) {
            let shape = &shapes[group[0].level];
            let range = shape.offset..shape.offset + shape.n_cols * shape.n_rows;
            let start = mask_start(shapes, group[0].level);
            let rows = masked.then(|| &row_masks[start..start + shape.n_rows]);
            filter(
                &sums[range.clone()],
                &mut accum[range],
                vertical,
                line,
                spans,
                shape.n_cols,
                shape.n_rows,
                group,
                self.boundary,
                rows,
                self.skip_empty,
            );
        }
        // Sums back down the pyramid and onto the fine grid.
        for j in (1..self.n_levels).rev() {
            let (lower, upper) = accum.split_at_mut(shapes[j].offset);
            interpolate::<false>(
                &upper[..shapes[j].n_cols * shapes[j].n_rows],
                shapes[j].n_cols,
                shapes[j].n_rows,
                &mut lower[shapes[j - 1].offset..shapes[j].offset],
                shapes[j - 1].n_cols,
                shapes[j - 1].n_rows,
                2,
                line,
                None,
                None,
            );
        }
        let base = &shapes[0];
        let w = self.identity_weight;
        if base.factor == 1 {
            rain.copy_from_slice(&accum[..n]);
            if w > 0.0 {
                for (row, out) in rain.chunks_exact_mut(self.n_cols).enumerate() {
                    source(row, fine_row);
                    for (r, &p) in out.iter_mut().zip(fine_row.iter()) {
                        *r += w * p;
                    }
                }
            }
        } else {
            let identity = (w > 0.0).then_some(Identity {
                source: &mut source,
                row: fine_row,
                weight: w,
            });
            interpolate::<true>(
                &accum[..base.n_cols * base.n_rows],
                base.n_cols,
                base.n_rows,
                rain,
                self.n_cols,
                self.n_rows,
                base.factor,
                line,
                identity,
                needed_rows,
            );
        }
    }
}

/// Scratch buffers of the fast convolution, shared by every operator on one grid.
#[derive(Clone, Debug)]
pub struct DispersalScratch {
    n_cols: usize,
    n_rows: usize,
    base_factor: usize,
    shapes: Vec<LevelShape>,
    sums: Vec<f32>,
    accum: Vec<f32>,
    vertical: Vec<f32>,
    line: Vec<f32>,
    /// One flag per row of every level, for [`DispersalOperator::apply_rows`].
    row_masks: Vec<bool>,
    /// Per row of the level being filtered: its nonzero columns lie in `start..end`
    /// (`start >= end` for a row of zeros).
    spans: Vec<(u32, u32)>,
    /// One row of the fine grid's production.
    fine_row: Vec<f32>,
}

impl DispersalScratch {
    pub fn new(n_cols: usize, n_rows: usize, base_factor: usize) -> DispersalScratch {
        let base_factor = base_factor.max(1).next_power_of_two();
        let shapes = pyramid_shapes(n_cols, n_rows, base_factor);
        let last = &shapes[shapes.len() - 1];
        let total = last.offset + last.n_cols * last.n_rows;
        let longest = shapes[0].n_cols.max(shapes[0].n_rows);
        DispersalScratch {
            n_cols,
            n_rows,
            base_factor,
            sums: vec![0.0; total],
            accum: vec![0.0; total],
            vertical: vec![0.0; longest],
            line: vec![0.0; 3 * longest + 4],
            row_masks: vec![false; shapes.iter().map(|s| s.n_rows).sum()],
            spans: vec![(0, 0); shapes[0].n_rows],
            fine_row: vec![0.0; n_cols],
            shapes,
        }
    }
}

/// Moves the sums of `src` (n_cols x n_rows) up to `dst` on `shape` (`shape.factor` fine
/// cells a coarse cell): the transpose of [`interpolate`], each fine cell's value shared
/// between its two nearest coarse centres per axis with the tent weights that bring it
/// back down. Unlike block sums this keeps a source's position within its coarse cell to
/// first order (full weighting, as in multigrid restriction; common practice, no
/// source), so the pyramid's error is second order in the cell size. `row_buf` holds at
/// least `shape.n_cols` values.
fn restrict(
    src: &[f32],
    n_cols: usize,
    n_rows: usize,
    shape: &LevelShape,
    dst: &mut [f32],
    row_buf: &mut [f32],
) {
    dst.fill(0.0);
    for (row, values) in src.chunks_exact(n_cols).take(n_rows).enumerate() {
        restrict_row(values, row, n_rows, shape, dst, row_buf);
    }
}

/// [`restrict`] of the rows `source` writes into `fine_row` (`n_cols` cells).
#[allow(clippy::too_many_arguments)]
fn restrict_rows<F: FnMut(usize, &mut [f32])>(
    source: &mut F,
    fine_row: &mut [f32],
    n_cols: usize,
    n_rows: usize,
    shape: &LevelShape,
    dst: &mut [f32],
    row_buf: &mut [f32],
) {
    if shape.n_cols == n_cols && shape.n_rows == n_rows {
        for (row, out) in dst.chunks_exact_mut(n_cols).enumerate() {
            source(row, out);
        }
        return;
    }
    let fine_row = &mut fine_row[..n_cols];
    dst.fill(0.0);
    for row in 0..n_rows {
        source(row, fine_row);
        // A row without seed (ice, rock, beyond a type's range) would add only zeros.
        if fine_row.iter().fold(false, |any, &v| any | (v != 0.0)) {
            restrict_row(fine_row, row, n_rows, shape, dst, row_buf);
        }
    }
}

/// Adds fine row `row` of `n_rows` to the coarse sums `dst`.
fn restrict_row(
    values: &[f32],
    row: usize,
    n_rows: usize,
    shape: &LevelShape,
    dst: &mut [f32],
    row_buf: &mut [f32],
) {
    let (n_cols, c_cols, c_rows) = (values.len(), shape.n_cols, shape.n_rows);
    // An axis of one cell (a strip) is not aggregated, as in `interpolate`.
    let along = |c: usize, f: usize| if c == f { 1 } else { shape.factor };
    let (factor_x, factor_y) = (along(c_cols, n_cols), along(c_rows, n_rows));
    let across = &mut row_buf[..c_cols];
    if factor_x == 1 {
        across.copy_from_slice(values);
    } else if factor_x == 2 && n_cols == 2 * c_cols && c_cols >= 2 {
        gather_pairs(values, across);
    } else {
        across.fill(0.0);
        for (col, &v) in values.iter().enumerate() {
            let (c0, c1, w) = coarse_position(col, c_cols, factor_x);
            across[c0] += v - w * v;
            across[c1] += w * v;
        }
    }
    let (r0, r1, wy) = coarse_position(row, c_rows, factor_y);
    for (d, &h) in dst[r0 * c_cols..(r0 + 1) * c_cols]
        .iter_mut()
        .zip(across.iter())
    {
        *d += h - wy * h;
    }
    if wy > 0.0 {
        for (d, &h) in dst[r1 * c_cols..(r1 + 1) * c_cols]
            .iter_mut()
            .zip(across.iter())
        {
            *d += wy * h;
        }
    }
}

/// The transpose of [`spread_pairs`]: coarse cell k takes 3/4 of fine cells 2k and 2k + 1
/// and 1/4 of their outer neighbours (all of the outermost fine cells at the edges).
fn gather_pairs(fine: &[f32], coarse: &mut [f32]) {
    let c = coarse.len();
    let fine = &fine[..2 * c];
    coarse[0] = fine[0] + 0.75 * fine[1] + 0.25 * fine[2];
    for k in 1..c - 1 {
        coarse[k] =
            0.25 * (fine[2 * k - 1] + fine[2 * k + 2]) + 0.75 * (fine[2 * k] + fine[2 * k + 1]);
    }
    coarse[c - 1] = 0.25 * fine[2 * c - 3] + 0.75 * fine[2 * c - 2] + fine[2 * c - 1];
}

/// Mirror index into 0..n.
fn reflect(i: isize, n: usize) -> usize {
    let n2 = 2 * n as isize;
    let m = i.rem_euclid(n2);
    if m < n as isize {
        m as usize
    } else {
        (n2 - 1 - m) as usize
    }
}

/// `dst += weight * (taps (x) taps) * src` for each component of one level, separable, on
/// an n_cols x n_rows level. Row by row: each output row is filtered vertically into
/// `vertical` (one row) and at once horizontally into `dst`, every component in turn, so
/// no whole intermediate image goes through memory and the rows stay in cache.
///
/// With an absorbing edge only the columns that some nonzero source can reach are
/// filtered: a component's vertical pass runs over the columns where the rows within its
/// reach have seed, its horizontal pass one reach further, and a row with no seed within
/// reach is left alone. Everything skipped would have added exact zeros, so the result
/// is the same to the bit (seed sources are patchy: ice, rock and the far side of a
/// treeline produce none).
#[allow(clippy::too_many_arguments)]
fn filter(
    src: &[f32],
    dst: &mut [f32],
    vertical: &mut [f32],
    line: &mut [f32],
    spans: &mut [(u32, u32)],
    n_cols: usize,
    n_rows: usize,
    components: &[Component],
    boundary: Boundary,
    rows_needed: Option<&[bool]>,
    skip_empty: bool,
) {
    let out_v = &mut vertical[..n_cols];
    let row_at = |from: isize| -> Option<usize> {
        match boundary {
            Boundary::Absorbing if from < 0 || from >= n_rows as isize => None,
            Boundary::Absorbing => Some(from as usize),
            Boundary::Reflecting => Some(reflect(from, n_rows)),
        }
    };
    let line_of = |r: usize| &src[r * n_cols..(r + 1) * n_cols];
    let spans = &mut spans[..n_rows];
    for (row, span) in spans.iter_mut().enumerate() {
        let values = line_of(row);
        *span = match (skip_empty, values.iter().position(|&v| v != 0.0)) {
            (false, _) => (0, n_cols as u32),
            (true, None) => (0, 0),
            (true, Some(first)) => {
                let last = values.iter().rposition(|&v| v != 0.0).unwrap_or(first);
                (first as u32, last as u32 + 1)
            }
        };
    }
    for row in 0..n_rows {
        if rows_needed.is_some_and(|needed| !needed[row]) {
            continue;
        }
        let out = &mut dst[row * n_cols..(row + 1) * n_cols];
        for component in components {
            let (taps, weight) = (&component.taps, component.weight);
            let radius = taps.len() / 2;
            // Columns with seed in the rows within reach.
            let (mut first, mut end) = (n_cols, 0);
            for &(a, b) in &spans[row.saturating_sub(radius)..(row + radius + 1).min(n_rows)] {
                if a < b {
                    first = first.min(a as usize);
                    end = end.max(b as usize);
                }
            }
            if first >= end {
                continue;
            }
            if taps.len() == 1 {
                for (d, &s) in out[first..end].iter_mut().zip(&line_of(row)[first..end]) {
                    *d += weight * s;
                }
                continue;
            }
            // The taps are symmetric, so each pair of rows (or columns) at the same distance
            // is added before one multiplication: half the multiplications of a plain pass.
            let cols = first..end;
            let w = taps[radius];
            for (o, &s) in out_v[cols.clone()]
                .iter_mut()
                .zip(&line_of(row)[cols.clone()])
            {
                *o = w * s;
            }
            for k in 1..=radius {
                let w = taps[radius + k];
                let above = row_at(row as isize - k as isize);
                let below = row_at(row as isize + k as isize);
                match (above, below) {
                    (Some(a), Some(b)) => {
                        for ((o, &x), &y) in out_v[cols.clone()]
                            .iter_mut()
                            .zip(&line_of(a)[cols.clone()])
                            .zip(&line_of(b)[cols.clone()])
                        {
                            *o += w * (x + y);
                        }
                    }
                    (Some(r), None) | (None, Some(r)) => {
                        for (o, &x) in out_v[cols.clone()]
                            .iter_mut()
                            .zip(&line_of(r)[cols.clone()])
                        {
                            *o += w * x;
                        }
                    }
                    (None, None) => {}
                }
            }
            // Horizontal pass through a padded copy of the row; the vertical sums are zero
            // outside `cols`, so the output changes only within a reach of them.
            let padded = &mut line[..n_cols + 2 * radius];
            let outputs = first.saturating_sub(radius)..(end + radius).min(n_cols);
            match boundary {
                Boundary::Absorbing => {
                    // Padded index i holds column i - radius; the outputs read columns
                    // outputs.start - radius .. outputs.end + radius.
                    padded[outputs.start..first + radius].fill(0.0);
                    padded[end + radius..outputs.end + 2 * radius].fill(0.0);
                    padded[first + radius..end + radius].copy_from_slice(&out_v[cols]);
                }
                Boundary::Reflecting => {
                    // A mirror image lands within a reach of its source, so `outputs` holds
                    // every column it can change; outside `cols` the vertical sums are zero.
                    let start = outputs.start;
                    for (i, p) in padded[start..outputs.end + 2 * radius]
                        .iter_mut()
                        .enumerate()
                    {
                        let c = reflect((start + i) as isize - radius as isize, n_cols);
                        *p = if cols.contains(&c) { out_v[c] } else { 0.0 };
                    }
                }
            }
            let w = taps[radius] * weight;
            let (o0, o1) = (outputs.start, outputs.end);
            for (o, &s) in out[outputs]
                .iter_mut()
                .zip(&padded[o0 + radius..o1 + radius])
            {
                *o += w * s;
            }
            for k in 1..=radius {
                let w = taps[radius + k] * weight;
                let left = &padded[o0 + radius - k..o1 + radius - k];
                let right = &padded[o0 + radius + k..o1 + radius + k];
                for ((o, &x), &y) in out[o0..o1].iter_mut().zip(left).zip(right) {
                    *o += w * (x + y);
                }
            }
        }
    }
}

/// Where the row flags of `level` start in [`DispersalScratch::row_masks`].
fn mask_start(shapes: &[LevelShape], level: usize) -> usize {
    shapes[..level].iter().map(|s| s.n_rows).sum()
}

/// Coarse rows (or columns) of fine index `i` and the weight on the second.
fn coarse_position(i: usize, n: usize, factor: usize) -> (usize, usize, f32) {
    let x = (i as f32 + 0.5) / factor as f32 - 0.5;
    if x <= 0.0 {
        return (0, 0, 0.0);
    }
    let lo = x.floor() as usize;
    if lo + 1 >= n {
        return (n - 1, n - 1, 0.0);
    }
    (lo, lo + 1, x - lo as f32)
}

/// The share of seed that stays in its cell, added by [`interpolate`] row by row.
struct Identity<'a> {
    source: &'a mut dyn FnMut(usize, &mut [f32]),
    row: &'a mut [f32],
    weight: f32,
}

/// Adds (or with `ASSIGN` writes) the bilinear interpolation of coarse sums, spread over
/// `factor x factor` fine cells, to `fine`. `row_buf` holds at least `c_cols` values.
/// With `identity`, each fine row then adds weight x the source's row while it is in
/// cache. Fine rows not in `rows_needed` are left as they are.
#[allow(clippy::too_many_arguments)]
fn interpolate<const ASSIGN: bool>(
    coarse: &[f32],
    c_cols: usize,
    c_rows: usize,
    fine: &mut [f32],
    f_cols: usize,
    f_rows: usize,
    factor: usize,
    row_buf: &mut [f32],
    mut identity: Option<Identity>,
    rows_needed: Option<&[bool]>,
) {
    // An axis of one cell (a strip) is not aggregated, so it spreads over one cell.
    let along = |c: usize, f: usize| if c == f { 1 } else { factor };
    let (factor_x, factor_y) = (along(c_cols, f_cols), along(c_rows, f_rows));
    let per_cell = 1.0 / (factor_x * factor_y) as f32;
    // Fine cell i lies at coarse position x = (i + 0.5) / factor - 0.5, between coarse cells
    // lo and lo + 1 with weight x - lo on lo + 1; outside the first and last centres the
    // edge value holds.
    let position = coarse_position;
    let blended = &mut row_buf[..c_cols];
    for row in 0..f_rows {
        if rows_needed.is_some_and(|needed| !needed[row]) {
            continue;
        }
        let (r0, r1, wy) = position(row, c_rows, factor_y);
        let top = &coarse[r0 * c_cols..(r0 + 1) * c_cols];
        let bottom = &coarse[r1 * c_cols..(r1 + 1) * c_cols];
        for ((b, &t), &u) in blended.iter_mut().zip(top).zip(bottom) {
            *b = per_cell * (t + wy * (u - t));
        }
        let out = &mut fine[row * f_cols..(row + 1) * f_cols];
        if factor_x == 1 {
            for (o, &b) in out.iter_mut().zip(blended.iter()) {
                *o = if ASSIGN { b } else { *o + b };
            }
        } else if factor_x == 2 && f_cols == 2 * c_cols && c_cols >= 2 {
            spread_pairs::<ASSIGN>(blended, out);
        } else {
            spread_blocks::<ASSIGN>(blended, out, factor_x);
        }
        if let Some(Identity {
            source,
            row: values,
            weight,
        }) = identity.as_mut()
        {
            source(row, values);
            for (o, &v) in out.iter_mut().zip(values.iter()) {
                *o += *weight * v;
            }
        }
    }
}

/// The general horizontal spread of [`interpolate`]: `factor_x` fine cells per coarse cell.
fn spread_blocks<const ASSIGN: bool>(blended: &[f32], out: &mut [f32], factor_x: usize) {
    let c_cols = blended.len();
    // Whole coarse cells: the `factor_x` fine cells of coarse cell k blend k with its
    // left neighbour in their left half and with its right neighbour in the right half.
    let half = factor_x / 2;
    let inv = 1.0 / factor_x as f32;
    for (k, block) in out.chunks_mut(factor_x).enumerate() {
        let mid = blended[k];
        let left = blended[k.saturating_sub(1)];
        let right = blended[(k + 1).min(c_cols - 1)];
        for (j, o) in block.iter_mut().enumerate() {
            let v = if j < half {
                let w = 0.5 + (j as f32 + 0.5) * inv;
                left + w * (mid - left)
            } else {
                let w = (j as f32 + 0.5) * inv - 0.5;
                mid + w * (right - mid)
            };
            *o = if ASSIGN { v } else { *o + v };
        }
    }
}

/// The general loop of [`interpolate`] for two fine cells per coarse cell, written so that
/// it vectorises: fine cell 2k is 3/4 coarse cell k and 1/4 its left neighbour, fine cell
/// 2k + 1 likewise with the right neighbour (the same operations in the same order, so the
/// same bits).
fn spread_pairs<const ASSIGN: bool>(blended: &[f32], out: &mut [f32]) {
    let c = blended.len();
    let out = &mut out[..2 * c];
    let put = |o: &mut f32, v: f32| *o = if ASSIGN { v } else { *o + v };
    let (first, last) = (blended[0], blended[c - 1]);
    // At the edges the general loop blends a cell with itself: the cell's own value.
    put(&mut out[0], first);
    put(&mut out[1], first + 0.25 * (blended[1] - first));
    let inner = &mut out[2..2 * c - 2];
    for (k, pair) in inner.chunks_exact_mut(2).enumerate() {
        let (left, mid, right) = (blended[k], blended[k + 1], blended[k + 2]);
        put(&mut pair[0], left + 0.75 * (mid - left));
        put(&mut pair[1], mid + 0.25 * (right - mid));
    }
    put(
        &mut out[2 * c - 2],
        blended[c - 2] + 0.75 * (last - blended[c - 2]),
    );
    put(&mut out[2 * c - 1], last);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plants::kernels::*;

    #[test]
    fn ln_gamma_matches_known_values() {
        assert!((ln_gamma(0.5) - std::f64::consts::PI.sqrt().ln()).abs() < 1e-12);
        assert!((ln_gamma(5.0) - 24f64.ln()).abs() < 1e-12);
        assert!((ln_gamma(1.5) - (std::f64::consts::PI.sqrt() / 2.0).ln()).abs() < 1e-12);
    }

    #[test]
    fn mixture_weights_sum_to_one() {
        for family in [
            KernelFamily::NegativeExponential,
            KernelFamily::Gaussian,
            KernelFamily::TwoDt,
        ] {
            let k = Kernel::from_mean(family, 50.0, 1.0).expect("valid");
            let total: f64 = k.gaussian_mixture().iter().map(|c| c.0).sum();
            assert!((total - 1.0).abs() < 1e-12);
        }
    }

    #[test]
    fn point_source_mass_is_kept_away_from_edges() {
        let k = Kernel::from_mean(KernelFamily::Gaussian, 60.0, 1.0).expect("valid");
        let (n_cols, n_rows) = (64, 64);
        let op = DispersalOperator::new(&k, 10.0, n_cols, n_rows, 1, Boundary::Absorbing);
        let mut scratch = op.scratch();
        let mut production = vec![0.0; n_cols * n_rows];
        production[32 * n_cols + 32] = 1.0;
        let mut rain = vec![0.0; n_cols * n_rows];
        op.apply(&production, &mut rain, &mut scratch);
        let total: f32 = rain.iter().sum();
        assert!((total - 1.0).abs() < 1e-3, "{total}");
    }

    #[test]
    fn coarse_levels_keep_a_sources_mass_and_place() {
        // Full weighting keeps a lone source's centroid where it is, whichever fine cell of
        // its coarse cell it sits in; block sums would move it to the coarse centre, half a
        // block off (the centroid property of multigrid full weighting; common practice, no
        // source). Even and odd widths take the paired and the general transfer.
        let k = Kernel::from_mean(KernelFamily::NegativeExponential, 100.0, 1.0).expect("valid");
        for (n_cols, n_rows) in [(128, 128), (127, 125)] {
            let op = DispersalOperator::new(&k, 10.0, n_cols, n_rows, 2, Boundary::Absorbing);
            assert!(op.cost().1 > 2, "several levels");
            let mut scratch = op.scratch();
            for (row, col) in [(60, 60), (60, 61), (61, 60), (63, 64)] {
                let mut production = vec![0.0; n_cols * n_rows];
                production[row * n_cols + col] = 1.0;
                let mut rain = vec![0.0; n_cols * n_rows];
                op.apply(&production, &mut rain, &mut scratch);
                let (mut mass, mut x, mut y) = (0.0f64, 0.0f64, 0.0f64);
                for (i, &r) in rain.iter().enumerate() {
                    mass += f64::from(r);
                    x += f64::from(r) * (i % n_cols) as f64;
                    y += f64::from(r) * (i / n_cols) as f64;
                }
                // The edge is 60 cells (12 kernel scales) away.
                assert!((mass - 1.0).abs() < 1e-3, "mass {mass}");
                let (x, y) = (x / mass, y / mass);
                assert!(
                    (x - col as f64).abs() < 0.1,
                    "{n_cols}: col {col}, centroid {x}"
                );
                assert!(
                    (y - row as f64).abs() < 0.1,
                    "{n_rows}: row {row}, centroid {y}"
                );
            }
        }
    }

    #[test]
    fn skipping_seedless_columns_changes_no_bit() {
        let k = Kernel::from_mean(KernelFamily::TwoDt, 200.0, 1.0).expect("valid");
        let (n_cols, n_rows) = (150, 110);
        // Patchy sources: a block, a lone cell near an edge, empty bands between.
        let production: Vec<f32> = (0..n_cols * n_rows)
            .map(|i| {
                let (row, col) = (i / n_cols, i % n_cols);
                let block = (40..55).contains(&row) && (60..90).contains(&col);
                let lone = row == 3 && col == 146;
                if block || lone {
                    1.0 + (i % 7) as f32
                } else {
                    0.0
                }
            })
            .collect();
        for (base, boundary) in [1, 2]
            .into_iter()
            .flat_map(|b| [(b, Boundary::Absorbing), (b, Boundary::Reflecting)])
        {
            let op = DispersalOperator::new(&k, 10.0, n_cols, n_rows, base, boundary);
            let mut full_op = op.clone();
            full_op.skip_empty = false;
            let mut scratch = op.scratch();
            let (mut skipped, mut full) = (vec![0.0; n_cols * n_rows], vec![0.0; n_cols * n_rows]);
            op.apply(&production, &mut skipped, &mut scratch);
            full_op.apply(&production, &mut full, &mut scratch);
            let bits = |v: &[f32]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&skipped), bits(&full), "base {base}, {boundary:?}");
        }
    }

    #[test]
    fn needed_rows_match_the_full_operator_exactly() {
        let k = Kernel::from_mean(KernelFamily::NegativeExponential, 300.0, 1.0).expect("valid");
        let (n_cols, n_rows) = (96, 120);
        for (base, boundary) in [(1, Boundary::Absorbing), (4, Boundary::Reflecting)] {
            let op = DispersalOperator::new(&k, 25.0, n_cols, n_rows, base, boundary);
            assert!(op.cost().1 > 1, "more than one level");
            let mut scratch = op.scratch();
            let production: Vec<f32> = (0..n_cols * n_rows)
                .map(|i| ((i * 7919) % 13) as f32)
                .collect();
            let mut full = vec![0.0; n_cols * n_rows];
            op.apply(&production, &mut full, &mut scratch);
            let needed: Vec<bool> = (0..n_rows).map(|r| r % 37 < 5 || r == 119).collect();
            let mut part = vec![0.0; n_cols * n_rows];
            op.apply_rows(&production, &mut part, &mut scratch, Some(&needed));
            for (row, _) in needed.iter().enumerate().filter(|(_, &b)| b) {
                let cells = row * n_cols..(row + 1) * n_cols;
                assert_eq!(full[cells.clone()], part[cells], "row {row}");
            }
        }
    }
}
