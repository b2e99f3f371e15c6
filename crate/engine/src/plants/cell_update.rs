//! One block of cells through one year: soil development and stage, then for each type
//! establishment, logistic growth under shading and mortality, skipping every chunk of
//! [`CHUNK`] cells where a type is absent and cannot establish (the chunk index).

use crate::ice::exposure::ICE_COVER_THRESHOLD_M;
use crate::plants::chunks::{all_positive, chunk_max, lane_sum};
use crate::plants::draws::{draw_key, hash_uniform};
use crate::plants::establishment::{
    larger, smaller, suitability, update_cover, update_established_cover, TypeRates,
};
use crate::plants::pft::{GrowthForm, MAX_TYPES};
use crate::plants::soil::develop;
use crate::plants::succession::{stage, CellCover};
use crate::plants::vegetation::*;
use crate::plants::vegetation_code;

impl VegetationModel {
    /// Whether type `t` needs updating in `chunk` this year: it is there, or some cell of
    /// the chunk may be warm, developed and flat enough for it. Reads this year's soil.
    pub(super) fn chunk_grows(&self, t: usize, chunk: usize, anomaly_c: f32) -> bool {
        chunk_grows(
            &self.types[t].rates,
            self.chunk_occupied[t * self.chunk_open.len() + chunk],
            self.chunk_max_temp_c[chunk] + anomaly_c,
            self.chunk_max_soil[chunk],
            self.chunk_min_slope_deg[chunk],
        )
    }

    /// Sorts cells into open, freshly exposed and closed (ice or nodata) for this year and
    /// develops the soil one year: ice and fresh ground start from nothing (glacial scour),
    /// nitrogen fixers act through last year's cover. One pass, chunk by chunk, that also
    /// records each chunk's richest soil and whether it is all open: the layers it reads
    /// are far beyond the caches on large grids.
    pub(super) fn classify_and_develop_soil(
        &mut self,
        year: i32,
        ice_thickness_m: &[f32],
        year_exposed: &[i32],
        anomaly_c: f32,
    ) {
        let n = self.state.n_cells;
        // The Q10 response factors into a per-cell part and one for the year's anomaly.
        let year_factor = libm::powf(self.soil.q10 as f32, anomaly_c / 10.0);
        let boost = self.fixer_boost;
        for (chunk, start) in (0..n).step_by(CHUNK).enumerate() {
            let cells = start..(start + CHUNK).min(n);
            let len = cells.len();
            let kinds = &mut self.cell_kind[cells.clone()];
            for (((kind, &ice), &exposed), &valid) in kinds
                .iter_mut()
                .zip(&ice_thickness_m[cells.clone()])
                .zip(&year_exposed[cells.clone()])
                .zip(&self.valid[cells.clone()])
            {
                *kind = if !valid || ice >= ICE_COVER_THRESHOLD_M {
                    CELL_CLOSED
                } else if exposed == year {
                    CELL_FRESH
                } else {
                    CELL_OPEN
                };
            }
            let mut fixer = [0.0f32; CHUNK];
            for (t, setup) in self.types.iter().enumerate() {
                if setup.nitrogen_fixer {
                    let cover = &self.state.cover[t * n + cells.start..t * n + cells.end];
                    for (f, &c) in fixer[..len].iter_mut().zip(cover) {
                        *f += c;
                    }
                }
            }
            let mut bound = [0.0f32; CHUNK];
            for (((((soil, &kind), &site), &temp_factor), &fixer), b) in self.state.soil
                [cells.clone()]
            .iter_mut()
            .zip(kinds.iter())
            .zip(&self.soil_site_rate[cells.clone()])
            .zip(&self.soil_temp_factor[cells.clone()])
            .zip(&fixer[..len])
            .zip(&mut bound[..len])
            {
                let (start, fixer) = if kind == CELL_OPEN {
                    (*soil, fixer)
                } else {
                    (0.0, 0.0)
                };
                let developed =
                    develop(start, site, temp_factor * year_factor, 1.0 + boost * fixer);
                *soil = if kind == CELL_CLOSED { 0.0 } else { developed };
                *b = if kind == CELL_CLOSED { -1.0 } else { *soil };
            }
            self.chunk_max_soil[chunk] = chunk_max(&bound[..len]);
            self.chunk_open[chunk] = kinds.iter().fold(true, |all, &k| all & (k == CELL_OPEN));
        }
    }

    /// One year of every type in the cells of `cells`, tallest first, each under the
    /// canopy of the taller types already updated; then the stage of each cell. Adds each
    /// type's cover to `cover_sums` and each stage's cells to `stage_cells` (nodata as ice).
    /// First establishment in an empty cell is drawn from a counter-based hash of seed,
    /// year, type and cell (Salmon et al. 2011, "Parallel random numbers: as easy as 1, 2,
    /// 3", SC'11), so the cell loop needs no sequential generator state and vectorises.
    pub(super) fn update_block(
        &mut self,
        cells: std::ops::Range<usize>,
        year: i32,
        anomaly_c: f32,
        cover_sums: &mut [f64; MAX_TYPES],
        stage_cells: &mut [usize; N_STAGES],
    ) {
        let n = self.state.n_cells;
        let len = cells.len();
        let sums = &mut self.block_sums;
        for buffer in sums.iter_mut() {
            buffer[..len].fill(0.0);
        }
        let [canopy, graminoid, woody, tree, oldest] = sums;
        for &t in &self.order {
            let setup = &self.types[t];
            let form = setup.form;
            let rates = &setup.rates;
            let key = draw_key(self.establishment_key, year, t);
            let n_chunks = n.div_ceil(CHUNK);
            let first_chunk = cells.start / CHUNK;
            // Per chunk: skipped, updated in full, or updated without establishment draws
            // (the type is in every cell and every cell is open, so no draw is used). A
            // chunk where the type is absent is skipped too when no cell's draw can succeed.
            const SKIP: u8 = 0;
            const FULL: u8 = 1;
            const ESTABLISHED: u8 = 2;
            let mut kinds = [SKIP; BLOCK / CHUNK];
            for (k, kind) in kinds
                .iter_mut()
                .enumerate()
                .take(cells.len().div_ceil(CHUNK))
            {
                let chunk = first_chunk + k;
                let grows = chunk_grows(
                    rates,
                    self.chunk_occupied[t * n_chunks + chunk],
                    self.chunk_max_temp_c[chunk] + anomaly_c,
                    self.chunk_max_soil[chunk],
                    self.chunk_min_slope_deg[chunk],
                );
                let occupied = self.chunk_occupied[t * n_chunks + chunk];
                *kind = if !grows {
                    SKIP
                } else if self.chunk_established[t * n_chunks + chunk] && self.chunk_open[chunk] {
                    ESTABLISHED
                } else if occupied {
                    FULL
                } else {
                    let chunk_cells = chunk * CHUNK..((chunk + 1) * CHUNK).min(n);
                    let rain = &self.rain[t * n + chunk_cells.start..t * n + chunk_cells.end];
                    if may_establish(
                        key,
                        chunk_cells.start as u32,
                        rain,
                        rates.establishment_per_seed,
                    ) {
                        FULL
                    } else {
                        SKIP
                    }
                };
            }
            let kind_of = |chunk: usize| kinds[chunk - first_chunk];
            let mut start = cells.start;
            while start < cells.end {
                let kind = kind_of(start / CHUNK);
                if kind == SKIP {
                    start = (start + CHUNK).min(cells.end);
                    continue;
                }
                // One call over the whole run of chunks of the same kind.
                let mut end = (start + CHUNK).min(cells.end);
                while end < cells.end && kind_of(end / CHUNK) == kind {
                    end = (end + CHUNK).min(cells.end);
                }
                let local = start - cells.start..end - cells.start;
                let layer = t * n + start..t * n + end;
                // One loop per growth form, so each adds only to the sums it counts in.
                let grow = match (kind == ESTABLISHED, form) {
                    (true, GrowthForm::PioneerHerb) => grow_cells::<true, HERB>,
                    (true, GrowthForm::Graminoid) => grow_cells::<true, GRAMINOID>,
                    (true, GrowthForm::Shrub) => grow_cells::<true, SHRUB>,
                    (true, GrowthForm::Tree) => grow_cells::<true, TREE>,
                    (false, GrowthForm::PioneerHerb) => grow_cells::<false, HERB>,
                    (false, GrowthForm::Graminoid) => grow_cells::<false, GRAMINOID>,
                    (false, GrowthForm::Shrub) => grow_cells::<false, SHRUB>,
                    (false, GrowthForm::Tree) => grow_cells::<false, TREE>,
                };
                grow(
                    rates,
                    key,
                    start as u32,
                    anomaly_c,
                    CellInputs {
                        kind: &self.cell_kind[start..end],
                        temp_base_c: &self.temp_base_c[start..end],
                        soil: &self.state.soil[start..end],
                        slope_deg: &self.slope_deg[start..end],
                        rain: &self.rain[layer.clone()],
                    },
                    &mut self.state.cover[layer.clone()],
                    &mut self.state.age_a[layer.clone()],
                    FormSums {
                        canopy: &mut canopy[local.clone()],
                        graminoid: &mut graminoid[local.clone()],
                        woody: &mut woody[local.clone()],
                        tree: &mut tree[local.clone()],
                        oldest_tree_age_a: &mut oldest[local],
                    },
                );
                for (k, chunk_cells) in self.state.cover[layer].chunks(CHUNK).enumerate() {
                    let chunk_cover = lane_sum(chunk_cells);
                    let chunk = t * n_chunks + start / CHUNK + k;
                    self.chunk_occupied[chunk] = chunk_cover > 0.0;
                    self.chunk_established[chunk] = all_positive(chunk_cells);
                    cover_sums[t] += chunk_cover;
                }
                start = end;
            }
        }
        let th = self.thresholds;
        let stages = &mut self.state.stage[cells.clone()];
        let kind = &self.cell_kind[cells];
        for i in 0..len {
            let cover = CellCover {
                total: canopy[i],
                graminoid: graminoid[i],
                woody: woody[i],
                tree: tree[i],
                oldest_tree_age_a: oldest[i],
            };
            let code = stage(&cover, &th);
            stages[i] = if kind[i] == CELL_CLOSED {
                vegetation_code::ICE
            } else {
                code
            };
        }
        // One counting pass per stage over bytes; the sums of 0/1 vectorise, a histogram's
        // scattered increments would not.
        for (k, count) in stage_cells.iter_mut().enumerate() {
            let matches: u32 = stages.iter().map(|&c| u32::from(c == k as u8)).sum();
            *count += matches as usize;
        }
    }
}

/// Per-cell layers one type's update reads.
pub(super) struct CellInputs<'a> {
    kind: &'a [f32],
    temp_base_c: &'a [f32],
    soil: &'a [f32],
    slope_deg: &'a [f32],
    rain: &'a [f32],
}

/// Per-cell sums over the types updated so far this year.
pub(super) struct FormSums<'a> {
    canopy: &'a mut [f32],
    graminoid: &'a mut [f32],
    woody: &'a mut [f32],
    tree: &'a mut [f32],
    oldest_tree_age_a: &'a mut [f32],
}

/// The cell loop of one type in [`VegetationModel::update_block`], over slices of one length so that the
/// compiler drops bounds checks.
#[allow(clippy::too_many_arguments)]
pub(super) fn grow_cells<const ESTABLISHED: bool, const FORM: u8>(
    rates: &TypeRates,
    key: u32,
    first_cell: u32,
    anomaly_c: f32,
    input: CellInputs,
    cover: &mut [f32],
    ages: &mut [f32],
    sums: FormSums,
) {
    let n = cover.len();
    let (kind, temp_base_c, soil, slope_deg, rain) = (
        &input.kind[..n],
        &input.temp_base_c[..n],
        &input.soil[..n],
        &input.slope_deg[..n],
        &input.rain[..n],
    );
    let ages = &mut ages[..n];
    let canopy = &mut sums.canopy[..n];
    let graminoid = &mut sums.graminoid[..n];
    let woody = &mut sums.woody[..n];
    let tree = &mut sums.tree[..n];
    let oldest = &mut sums.oldest_tree_age_a[..n];
    for i in 0..n {
        let kind = kind[i];
        let suit = suitability(rates, temp_base_c[i] + anomaly_c, soil[i], slope_deg[i]);
        let suit = if kind == CELL_CLOSED { 0.0 } else { suit };
        // Unconditional loads: a load inside a branch would need masked loads, which
        // SSE2 and wasm SIMD lack, and the loop would stay scalar.
        let (last_cover, last_age) = (cover[i], ages[i]);
        let c0 = if kind == CELL_OPEN { last_cover } else { 0.0 };
        let age0 = if kind == CELL_OPEN { last_age } else { 0.0 };
        let under = canopy[i];
        let c = if ESTABLISHED {
            update_established_cover(rates, c0, suit, under, rain[i])
        } else {
            let uniform = hash_uniform(key ^ (first_cell + i as u32));
            update_cover(rates, c0, suit, under, rain[i], uniform)
        };
        let gone = c < EXTINCT_COVER;
        let c = if gone { 0.0 } else { c };
        let age = if gone {
            0.0
        } else {
            smaller(age0 + 1.0, MAX_AGE_A)
        };
        cover[i] = c;
        ages[i] = age;
        canopy[i] = under + c;
        if FORM == GRAMINOID {
            graminoid[i] += c;
        }
        if FORM == SHRUB || FORM == TREE {
            woody[i] += c;
        }
        if FORM == TREE {
            tree[i] += c;
            let tree_age = if c >= 0.05 { age } else { 0.0 };
            oldest[i] = larger(oldest[i], tree_age);
        }
    }
}

/// Growth forms as [`grow_cells`] parameters.
pub(super) const HERB: u8 = 0;
pub(super) const GRAMINOID: u8 = 1;
pub(super) const SHRUB: u8 = 2;
pub(super) const TREE: u8 = 3;

/// Whether some cell of a chunk without the type may see it establish this year. The draw
/// must fall below P(lambda) <= lambda <= seed rain x establishment per seed (suitability,
/// light and free space are each at most 1; the fast exponential of
/// [`establishment_probability`](crate::plants::establishment::establishment_probability) errs by
/// far less than lambda), so where every draw is at least twice that bound the update
/// leaves every cell empty and every sum as it was: skipping it changes no bit.
pub(super) fn may_establish(key: u32, first_cell: u32, rain: &[f32], per_seed: f32) -> bool {
    let mut any = false;
    for (i, &seeds) in rain.iter().enumerate() {
        let uniform = hash_uniform(key ^ (first_cell + i as u32));
        any |= uniform < 2.0 * seeds * per_seed;
    }
    any
}

/// Whether a type needs its update in a chunk: it is there, or the warmest cell is warm
/// enough, the most developed soil developed enough and the gentlest slope flat enough.
pub(super) fn chunk_grows(
    rates: &TypeRates,
    occupied: bool,
    max_temp_c: f32,
    max_soil: f32,
    min_slope_deg: f32,
) -> bool {
    let barren = max_temp_c < rates.min_temp_c
        || max_soil < rates.min_soil
        || min_slope_deg > rates.max_slope_deg;
    occupied || !barren
}
