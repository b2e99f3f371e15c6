//! Seed rain of one type in one year: production by cover and age, the dispersal operator,
//! and long-distance events drawn from the kernel.

use crate::plants::chunks::lane_sum;
use crate::plants::disturbance::DisturbanceKind;
use crate::plants::draws::poisson;
use crate::plants::kernels::uniform_open;
use crate::plants::vegetation::*;

impl VegetationModel {
    /// Seed rain of type `t` into its rain layer: local kernel, seed bank, long-distance
    /// events. Returns the number of events drawn.
    ///
    /// The local kernel is exact only in the rows of `rows_needed`; no other row's rain
    /// is read this year.
    pub(super) fn disperse(&mut self, t: usize, year: i32) -> u32 {
        let n = self.state.n_cells;
        let n_cols = self.n_cols;
        let setup = &self.types[t];
        let cover = &self.state.cover[t * n..(t + 1) * n];
        let ages = &self.state.age_a[t * n..(t + 1) * n];
        let local = setup.seeds_per_cover * (1.0 - setup.long_distance_share);
        // Production row by row, straight into the filters' pyramid (a whole layer would
        // go through memory twice more), with the running total per row for the
        // long-distance draws. The operator's first pass visits every row in order, later
        // ones some rows in order, so the totals come out the same each time.
        let row_production = &mut self.row_production;
        let n_chunks = n.div_ceil(CHUNK);
        let occupied = &self.chunk_occupied[t * n_chunks..(t + 1) * n_chunks];
        let mut source = |row: usize, out: &mut [f32]| {
            let cells = row * n_cols..(row + 1) * n_cols;
            production_row(
                setup.age_first_seed_a,
                local,
                cover,
                ages,
                occupied,
                cells,
                out,
            );
            let before = if row > 0 {
                row_production[row - 1]
            } else {
                0.0
            };
            row_production[row] = before + lane_sum(out);
        };
        let rain = &mut self.rain[t * n..(t + 1) * n];
        if self.rows_needed.iter().any(|&r| r) {
            setup.operator.apply_rows_from(
                &mut source,
                rain,
                &mut self.scratch,
                Some(&self.rows_needed),
            );
        } else {
            // No row's rain is read this year; the total still sets the long-distance draws.
            let row_buf = &mut self.production_row[..];
            for row in 0..self.n_rows {
                source(row, row_buf);
            }
        }
        let total = self.row_production[self.n_rows - 1];
        let duration = self.seed_bank.duration_a.round() as i32;
        for scheduled in &self.disturbances {
            let since = year - scheduled.event.year;
            if scheduled.event.kind != DisturbanceKind::Burn || since < 0 || since >= duration {
                continue;
            }
            let n_event = scheduled.event.cells.len();
            for (j, &cell) in scheduled.event.cells.iter().enumerate() {
                rain[cell as usize] += scheduled.bank_seeds[t * n_event + j];
            }
        }
        // Long-distance events: expected recruits on ideal free ground, drawn as Poisson
        // events from sources in proportion to their seed.
        let share = f64::from(setup.long_distance_share);
        let per_seed = f64::from(setup.rates.establishment_per_seed);
        if total <= 0.0 || share <= 0.0 || per_seed <= 0.0 {
            return 0;
        }
        let expected = total / (1.0 - share) * share * per_seed;
        let (n_events, recruits_per_event) = if expected <= MAX_LONG_DISTANCE_EVENTS as f64 {
            (poisson(&mut self.rng, expected), 1.0)
        } else {
            (
                MAX_LONG_DISTANCE_EVENTS,
                expected / MAX_LONG_DISTANCE_EVENTS as f64,
            )
        };
        let seeds = (recruits_per_event / per_seed) as f32;
        for _ in 0..n_events {
            let target = uniform_open(&mut self.rng) * total;
            let row = self
                .row_production
                .partition_point(|&s| s < target)
                .min(self.n_rows - 1);
            let before = if row > 0 {
                self.row_production[row - 1]
            } else {
                0.0
            };
            // The source column: where the row's running production reaches the target.
            let mut left = (target - before) as f32;
            let mut col = n_cols - 1;
            let cover = &self.state.cover[t * n..(t + 1) * n];
            let ages = &self.state.age_a[t * n..(t + 1) * n];
            let occupied = &self.chunk_occupied[t * n_chunks..(t + 1) * n_chunks];
            let cells = row * n_cols..(row + 1) * n_cols;
            let mut start = cells.start;
            'search: while start < cells.end {
                let chunk = start / CHUNK;
                let end = ((chunk + 1) * CHUNK).min(cells.end);
                // Chunks without the type produce nothing: skipping them leaves `left` as
                // it is.
                if occupied[chunk] {
                    for (i, (&c, &age)) in
                        cover[start..end].iter().zip(&ages[start..end]).enumerate()
                    {
                        left -= seed_of(c, age, setup.age_first_seed_a, local);
                        if left <= 0.0 {
                            col = start + i - cells.start;
                            break 'search;
                        }
                    }
                }
                start = end;
            }
            let distance =
                setup.long_distance_kernel.sample_distance_m(&mut self.rng) / self.cell_size_m;
            let angle = std::f64::consts::TAU * uniform_open(&mut self.rng);
            // A jump off the grid is lost whatever the seed edge: folded back, kilometre
            // jumps on a grid a few kilometres across would return the forefield's own
            // colonists' seed as if it came from the land beyond.
            let x = col as f64 + 0.5 + distance * libm::cos(angle);
            let y = row as f64 + 0.5 + distance * libm::sin(angle);
            if x >= 0.0 && y >= 0.0 && x < n_cols as f64 && y < self.n_rows as f64 {
                rain[y as usize * n_cols + x as usize] += seeds;
            }
        }
        n_events as u32
    }
}

/// Seed a cell sends out in a year: its cover times seed per cover, once the type is old
/// enough to seed.
#[inline]
pub(super) fn seed_of(cover: f32, age_a: f32, first_seed_age_a: f32, per_cover: f32) -> f32 {
    if age_a >= first_seed_age_a {
        cover * per_cover
    } else {
        0.0
    }
}

/// Seed leaving each of the cells `cells` of one type's `cover` and `ages` layers: cover
/// times seed per cover where the type is old enough to seed. Chunks the type is absent
/// from (`occupied`, one flag a chunk) give zeros without reading the layers, which on
/// large grids are far beyond the caches.
pub(super) fn production_row(
    first_seed_age_a: f32,
    per_cover: f32,
    cover: &[f32],
    ages: &[f32],
    occupied: &[bool],
    cells: std::ops::Range<usize>,
    out: &mut [f32],
) {
    let mut start = cells.start;
    while start < cells.end {
        let chunk = start / CHUNK;
        let end = ((chunk + 1) * CHUNK).min(cells.end);
        let out = &mut out[start - cells.start..end - cells.start];
        if occupied[chunk] {
            for ((p, &c), &age) in out
                .iter_mut()
                .zip(&cover[start..end])
                .zip(&ages[start..end])
            {
                *p = seed_of(c, age, first_seed_age_a, per_cover);
            }
        } else {
            out.fill(0.0);
        }
        start = end;
    }
}
