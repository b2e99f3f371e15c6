//! The yearly colonisation model: soil development, seed production and dispersal (the
//! integrodifference step of Kot, Lewis & van den Driessche 1996, Ecology 77:2027, with the
//! kernels of Clark et al. 1999, Ecology 80:1475), long-distance events, establishment,
//! logistic growth under shading, mortality, disturbance and succession stage per cell.
//!
//! State is plain data ([`VegetationState`]: covers, ages, soil, stage as flat layers, one
//! layer per type for covers and ages); [`VegetationModel`] owns the state, the per-cell
//! site constants and every scratch buffer, so [`VegetationModel::step_year`] allocates
//! nothing. Randomness is seeded from the scenario: long-distance events come from one PCG
//! generator (O'Neill 2014) drawn in a fixed order, first establishment in a cell from a
//! counter-based hash of seed, year, type and cell (Salmon et al. 2011), so that the cell
//! loop carries no generator state. Cells are updated in blocks of [`BLOCK`] with every
//! type passing over a block before the next, so the per-cell sums stay in cache.

use rand::{Rng, SeedableRng};
use rand_pcg::Pcg32;
use serde::{Deserialize, Serialize};

use crate::base::grid::GridGeometry;
use crate::ice::exposure::ICE_COVER_THRESHOLD_M;
use crate::plants::dispersal::{Boundary, DispersalOperator, DispersalScratch};
use crate::plants::disturbance::{
    Disturbance, DisturbanceKind, ScheduledDisturbance, SeedBankParams,
};
use crate::plants::establishment::{
    larger, smaller, suitability, update_cover, update_established_cover, GrowingSeasonParams,
    TypeRates,
};
use crate::plants::kernels::{uniform_open, validate_kernel, Kernel};
use crate::plants::pft::{check_range, GrowthForm, PlantType, VegetationError, MAX_TYPES};
use crate::plants::soil::{develop, moisture_proxy, SoilParams};
use crate::plants::succession::{stage, CellCover, StageThresholds, StageThresholds32};
use crate::plants::vegetation_code;

/// Number of succession stages (codes 0 to 6).
pub const N_STAGES: usize = 7;

/// Most long-distance events drawn per type and year; beyond it each event carries more
/// seed, so the cost stays bounded on large grids.
pub const MAX_LONG_DISTANCE_EVENTS: usize = 256;

/// Oldest age a cell records for a type, years.
pub const MAX_AGE_A: f32 = 65_535.0;

/// Cover below which a type counts as gone from a cell.
const EXTINCT_COVER: f32 = 1e-5;

/// The vegetation block of a scenario.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct VegetationParams {
    /// Plant functional types, 1 to 8.
    pub types: Vec<PlantType>,
    pub soil: SoilParams,
    pub growing_season: GrowingSeasonParams,
    pub stages: StageThresholds,
    pub seed_bank: SeedBankParams,
    /// Finest cell size the dispersal filters run on, m (0 = the grid's own; at most
    /// 1000). Coarser is faster and blurs seed rain below this scale; the default 50 m
    /// keeps the error against a direct convolution below 0.5 % (reference checks).
    pub dispersal_cell_size_m: f64,
    /// What the seed rain assumes beyond the grid edge.
    pub seed_edge: SeedEdge,
}

/// What lies beyond the grid edge for seed.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SeedEdge {
    /// The land beyond the edge mirrors the land inside it: seed that would leave lands at the
    /// mirror point, which for a symmetric kernel is the same as seed arriving from mirrored
    /// sources outside. Long-distance jumps off the grid are still lost. The default: a DEM's
    /// edge is where it was clipped, not a barrier, and without it a tightly clipped
    /// forefield loses the seed of forest just outside (reference check `veg_seed_edge`).
    #[default]
    Mirrored,
    /// Seed leaving the grid is lost and none arrives from beyond it (an island, or a check
    /// against an unbounded closed form).
    Lost,
}

impl Default for VegetationParams {
    fn default() -> Self {
        VegetationParams {
            types: PlantType::defaults(),
            soil: SoilParams::default(),
            growing_season: GrowingSeasonParams::default(),
            stages: StageThresholds::default(),
            seed_bank: SeedBankParams::default(),
            dispersal_cell_size_m: 50.0,
            seed_edge: SeedEdge::default(),
        }
    }
}

impl VegetationParams {
    pub fn validate(&self) -> Result<(), VegetationError> {
        if self.types.is_empty() || self.types.len() > MAX_TYPES {
            return Err(VegetationError::Invalid {
                field: "types".to_string(),
                problem: format!("{} types given; 1 to {MAX_TYPES} allowed", self.types.len()),
            });
        }
        for (i, t) in self.types.iter().enumerate() {
            let prefix = format!("types[{i}]");
            t.validate(&prefix)?;
            validate_kernel(
                &format!("{prefix}.mean_dispersal_m"),
                t.kernel,
                t.mean_dispersal_m,
                t.kernel_shape_p,
            )?;
        }
        self.soil.validate()?;
        self.growing_season.validate()?;
        self.stages.validate()?;
        self.seed_bank.validate()?;
        check_range(
            "dispersal_cell_size_m",
            self.dispersal_cell_size_m,
            0.0,
            1000.0,
            "m",
        )
    }
}

/// The vegetation of every cell: plain data, readable as layers.
#[derive(Clone, Debug, PartialEq)]
pub struct VegetationState {
    pub n_cells: usize,
    pub n_types: usize,
    /// Cover fraction per type and cell, type-major: `cover[t * n_cells + cell]`.
    pub cover: Vec<f32>,
    /// Years since the type established in the cell (0 where absent; whole years, at most
    /// [`MAX_AGE_A`]), type-major. `f32` like the covers, so the cell loop runs in one lane
    /// width and vectorises.
    pub age_a: Vec<f32>,
    /// Soil development index per cell, [0, 1].
    pub soil: Vec<f32>,
    /// Succession stage per cell ([`vegetation_code`]).
    pub stage: Vec<u8>,
}

impl VegetationState {
    /// Cover layer of one type.
    pub fn cover_of(&self, type_idx: usize) -> &[f32] {
        &self.cover[type_idx * self.n_cells..(type_idx + 1) * self.n_cells]
    }

    /// Age layer of one type, years.
    pub fn age_of(&self, type_idx: usize) -> &[f32] {
        &self.age_a[type_idx * self.n_cells..(type_idx + 1) * self.n_cells]
    }
}

/// One row of the yearly vegetation summary.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct VegetationYearSummary {
    pub year: i32,
    /// Area per succession stage (index = stage code), km^2.
    pub stage_area_km2: [f64; N_STAGES],
    /// Mean cover per type over ice-free valid cells; entries past `n_types` are zero.
    pub mean_cover: [f64; MAX_TYPES],
    pub n_types: usize,
    /// Long-distance dispersal events drawn in the year, all types.
    pub long_distance_events: u32,
}

/// Stage-grid start: cover per growth form, soil index and tree age per stage code
/// (typical plot values, common practice, no source).
struct StageStart {
    cover: [f32; 4],
    soil: f32,
    tree_age_a: f32,
}

const STAGE_START: [StageStart; N_STAGES] = [
    StageStart {
        cover: [0.0, 0.0, 0.0, 0.0],
        soil: 0.0,
        tree_age_a: 0.0,
    },
    StageStart {
        cover: [0.0, 0.0, 0.0, 0.0],
        soil: 0.05,
        tree_age_a: 0.0,
    },
    StageStart {
        cover: [0.15, 0.0, 0.0, 0.0],
        soil: 0.1,
        tree_age_a: 0.0,
    },
    StageStart {
        cover: [0.1, 0.6, 0.0, 0.0],
        soil: 0.4,
        tree_age_a: 0.0,
    },
    StageStart {
        cover: [0.05, 0.3, 0.5, 0.0],
        soil: 0.6,
        tree_age_a: 0.0,
    },
    StageStart {
        cover: [0.0, 0.2, 0.2, 0.45],
        soil: 0.8,
        tree_age_a: 40.0,
    },
    StageStart {
        cover: [0.0, 0.1, 0.1, 0.75],
        soil: 1.0,
        tree_age_a: 150.0,
    },
];

fn form_index(form: GrowthForm) -> usize {
    match form {
        GrowthForm::PioneerHerb => 0,
        GrowthForm::Graminoid => 1,
        GrowthForm::Shrub => 2,
        GrowthForm::Tree => 3,
    }
}

/// Per-type constants of the yearly loop.
#[derive(Clone, Debug)]
struct TypeSetup {
    rates: TypeRates,
    form: GrowthForm,
    nitrogen_fixer: bool,
    age_first_seed_a: f32,
    /// Seeds per cell per unit cover per year.
    seeds_per_cover: f32,
    long_distance_share: f32,
    long_distance_kernel: Kernel,
    operator: DispersalOperator,
}

/// The yearly stepper: state, site constants and scratch memory.
#[derive(Clone, Debug)]
pub struct VegetationModel {
    n_cols: usize,
    n_rows: usize,
    cell_size_m: f64,
    cell_area_km2: f64,
    state: VegetationState,
    valid: Vec<bool>,
    temp_base_c: Vec<f32>,
    slope_deg: Vec<f32>,
    soil_site_rate: Vec<f32>,
    soil: SoilParams,
    fixer_boost: f32,
    thresholds: StageThresholds32,
    seed_bank: SeedBankParams,
    types: Vec<TypeSetup>,
    /// Type indices, tallest first.
    order: Vec<usize>,
    /// Soil temperature factor at each cell's base temperature (no anomaly).
    soil_temp_factor: Vec<f32>,
    /// Nodata cells (always stage ice, left out of the summary).
    n_invalid: usize,
    /// Seed from which each year's establishment draws are keyed.
    establishment_key: u64,
    scratch: DispersalScratch,
    /// One row of seed production.
    production_row: Vec<f32>,
    rain: Vec<f32>,
    row_production: Vec<f64>,
    /// Per cell and year: [`CELL_OPEN`], [`CELL_FRESH`] or [`CELL_CLOSED`] (`f32` codes,
    /// so the cell loop has one lane width).
    cell_kind: Vec<f32>,
    /// Per-cell sums of one block over the types updated so far this year: all cover (the
    /// canopy the next shorter type grows under), graminoid, woody and tree cover, oldest
    /// tree age.
    block_sums: [Vec<f32>; 5],
    rng: Pcg32,
    disturbances: Vec<ScheduledDisturbance>,
    /// Per chunk of [`CHUNK`] cells: warmest base temperature and gentlest slope.
    chunk_max_temp_c: Vec<f32>,
    chunk_min_slope_deg: Vec<f32>,
    /// Per chunk and year: richest soil of its open or fresh cells (-1 if none).
    chunk_max_soil: Vec<f32>,
    /// Per type and chunk (type-major): whether the type had cover there last year.
    chunk_occupied: Vec<bool>,
    /// Per type and chunk: whether the type had cover in every cell there last year.
    chunk_established: Vec<bool>,
    /// Per chunk and year: whether every cell is open (neither fresh nor closed).
    chunk_open: Vec<bool>,
    /// Per row: whether the type being dispersed needs updating in some chunk of it.
    rows_needed: Vec<bool>,
}

/// Cells per block of the yearly update.
const BLOCK: usize = 1024;

/// Cells per chunk: a type is skipped in a chunk where it had no cover last year and no
/// cell can take it this year (too cold, too poor or too steep everywhere), where the
/// update would leave every value as it is.
const CHUNK: usize = 64;

/// Ice-free ground that was ice-free last year too.
const CELL_OPEN: f32 = 0.0;
/// Ground the ice left this year: no plants, no soil yet, colonisable.
const CELL_FRESH: f32 = 1.0;
/// Under ice or nodata: nothing grows.
const CELL_CLOSED: f32 = 2.0;

impl VegetationModel {
    /// Builds the model and its initial state. `elevation_m` is the ground (bed) elevation
    /// with NaN at nodata, `slope_deg` its slope, `ice_thickness_m` the initial ice;
    /// `initial_stage` a stage code per cell, or `None` to start ice-free suitable ground at
    /// its potential vegetation. `anomaly_c` is the start year's temperature anomaly.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        params: &VegetationParams,
        geometry: &GridGeometry,
        elevation_m: &[f32],
        slope_deg: &[f32],
        ice_thickness_m: &[f32],
        initial_stage: Option<&[u8]>,
        anomaly_c: f64,
        seed: u64,
    ) -> Result<VegetationModel, VegetationError> {
        params.validate()?;
        let (n_cols, n_rows) = (geometry.n_cols, geometry.n_rows);
        let n = n_cols * n_rows;
        for (layer, len) in [
            ("elevation", elevation_m.len()),
            ("slope", slope_deg.len()),
            ("ice thickness", ice_thickness_m.len()),
            ("initial stage", initial_stage.map_or(n, <[u8]>::len)),
        ] {
            if len != n {
                return Err(VegetationError::WrongLength {
                    layer,
                    found: len,
                    expected: n,
                });
            }
        }
        if let Some(stages) = initial_stage {
            if let Some(i) = stages.iter().position(|&s| usize::from(s) >= N_STAGES) {
                return Err(VegetationError::BadCell {
                    layer: "initial stage",
                    row: i / n_cols,
                    col: i % n_cols,
                    value: f64::from(stages[i]),
                    what: "stage code (0 to 6)",
                });
            }
        }
        let cell_size_m = geometry.cell_size_m;
        let base_factor = ((params.dispersal_cell_size_m / cell_size_m).round() as usize).max(1);
        let base_factor = if base_factor.is_power_of_two() {
            base_factor
        } else {
            base_factor.next_power_of_two() / 2
        };
        let cell_area_m2 = (cell_size_m * cell_size_m) as f32;
        let types: Vec<TypeSetup> = params
            .types
            .iter()
            .map(|t| -> Result<TypeSetup, VegetationError> {
                let kernel = Kernel::from_mean(t.kernel, t.mean_dispersal_m, t.kernel_shape_p)?;
                let long_distance_kernel =
                    Kernel::from_mean(t.kernel, t.long_distance_mean_m, t.kernel_shape_p)?;
                Ok(TypeSetup {
                    rates: TypeRates::from(t),
                    form: t.growth_form,
                    nitrogen_fixer: t.nitrogen_fixer,
                    age_first_seed_a: t.age_first_seed_a.round() as f32,
                    seeds_per_cover: t.fecundity_per_m2_a as f32 * cell_area_m2,
                    long_distance_share: t.long_distance_share as f32,
                    long_distance_kernel,
                    operator: DispersalOperator::new(
                        &kernel,
                        cell_size_m,
                        n_cols,
                        n_rows,
                        base_factor,
                        match params.seed_edge {
                            SeedEdge::Mirrored => Boundary::Reflecting,
                            SeedEdge::Lost => Boundary::Absorbing,
                        },
                    ),
                })
            })
            .collect::<Result<_, _>>()?;
        let mut order: Vec<usize> = (0..types.len()).collect();
        order.sort_by_key(|&t| std::cmp::Reverse(params.types[t].height_class));

        let valid: Vec<bool> = elevation_m.iter().map(|z| z.is_finite()).collect();
        let temp_base_c: Vec<f32> = elevation_m
            .iter()
            .map(|&z| {
                params
                    .growing_season
                    .temperature_c(if z.is_finite() { z } else { 0.0 })
            })
            .collect();
        let slope: Vec<f32> = slope_deg
            .iter()
            .map(|&s| if s.is_finite() { s } else { 0.0 })
            .collect();
        let moisture = moisture_proxy(elevation_m, n_cols, n_rows, cell_size_m);
        let soil_site_rate: Vec<f32> = slope
            .iter()
            .zip(&moisture)
            .map(|(&s, &m)| params.soil.site_rate_per_a(s, m))
            .collect();

        let n_types = types.len();
        let mut state = VegetationState {
            n_cells: n,
            n_types,
            cover: vec![0.0; n_types * n],
            age_a: vec![0.0; n_types * n],
            soil: vec![0.0; n],
            stage: vec![vegetation_code::BARE; n],
        };
        let anomaly = anomaly_c as f32;
        for i in 0..n {
            if !valid[i] || ice_thickness_m[i] >= ICE_COVER_THRESHOLD_M {
                state.stage[i] = vegetation_code::ICE;
                continue;
            }
            let temp = temp_base_c[i] + anomaly;
            let code = initial_stage.map(|s| usize::from(s[i]));
            let soil = match code {
                Some(code) => STAGE_START[code].soil.max(STAGE_START[1].soil),
                None => 1.0,
            };
            state.soil[i] = soil;
            let mut canopy = 0.0f32;
            for &t in &order {
                let setup = &types[t];
                let suit = suitability(&setup.rates, temp, soil, slope[i]);
                if suit <= 0.0 {
                    continue;
                }
                let (target, age) = match code {
                    Some(code) => {
                        let start = &STAGE_START[code];
                        let form = form_index(setup.form);
                        let same_form = types.iter().filter(|s| s.form == setup.form).count();
                        let age = if setup.form == GrowthForm::Tree {
                            start.tree_age_a.max(setup.age_first_seed_a)
                        } else {
                            (setup.age_first_seed_a + 10.0).min(MAX_AGE_A)
                        };
                        (start.cover[form] / same_form as f32, age)
                    }
                    None => {
                        let potential = params.types[t].potential_cover(f64::from(suit)) as f32;
                        (potential, (setup.age_first_seed_a + 100.0).min(MAX_AGE_A))
                    }
                };
                let c = target.min(1.0 - canopy).max(0.0);
                if c > EXTINCT_COVER {
                    state.cover[t * n + i] = c;
                    state.age_a[t * n + i] = age;
                    canopy += c;
                }
            }
        }
        let scratch = types[0].operator.scratch();
        let soil_temp_factor = temp_base_c
            .iter()
            .map(|&t| params.soil.temperature_factor(t))
            .collect();
        let n_invalid = valid.iter().filter(|&&v| !v).count();
        let mut model = VegetationModel {
            n_cols,
            n_rows,
            cell_size_m,
            cell_area_km2: f64::from(cell_area_m2) / 1e6,
            state,
            valid,
            temp_base_c,
            slope_deg: slope,
            soil_site_rate,
            soil: params.soil.clone(),
            fixer_boost: params.soil.nitrogen_fixer_boost as f32,
            thresholds: StageThresholds32::from(&params.stages),
            seed_bank: params.seed_bank.clone(),
            types,
            order,
            scratch,
            soil_temp_factor,
            n_invalid,
            establishment_key: seed ^ 0x9E37_79B9_7F4A_7C15,
            production_row: vec![0.0; n_cols],
            rain: vec![0.0; n_types * n],
            row_production: vec![0.0; n_rows],
            cell_kind: vec![CELL_CLOSED; n],
            block_sums: std::array::from_fn(|_| vec![0.0; BLOCK]),
            rng: Pcg32::seed_from_u64(seed),
            disturbances: Vec::new(),
            chunk_max_temp_c: Vec::new(),
            chunk_min_slope_deg: Vec::new(),
            chunk_max_soil: vec![0.0; n.div_ceil(CHUNK)],
            chunk_occupied: Vec::new(),
            chunk_established: Vec::new(),
            chunk_open: vec![false; n.div_ceil(CHUNK)],
            rows_needed: vec![false; n_rows],
        };
        model.chunk_max_temp_c = model.temp_base_c.chunks(CHUNK).map(chunk_max).collect();
        model.chunk_min_slope_deg = model
            .slope_deg
            .chunks(CHUNK)
            .map(|chunk| -chunk_max_negated(chunk))
            .collect();
        model.chunk_occupied = (0..n_types)
            .flat_map(|t| model.state.cover[t * n..(t + 1) * n].chunks(CHUNK))
            .map(|chunk| chunk.iter().any(|&c| c > 0.0))
            .collect();
        model.chunk_established = (0..n_types)
            .flat_map(|t| model.state.cover[t * n..(t + 1) * n].chunks(CHUNK))
            .map(all_positive)
            .collect();
        for i in 0..n {
            if model.state.stage[i] != vegetation_code::ICE {
                model.state.stage[i] = stage(&model.cell_cover(i), &model.thresholds);
            }
        }
        Ok(model)
    }

    /// Summary of the current state (stage areas and mean covers) labelled `year`.
    pub fn summarise(&self, year: i32) -> VegetationYearSummary {
        let n = self.state.n_cells;
        let mut stage_area_km2 = [0.0; N_STAGES];
        let mut mean_cover = [0.0; MAX_TYPES];
        let mut ice_free = 0usize;
        for i in 0..n {
            if !self.valid[i] {
                continue;
            }
            let code = self.state.stage[i];
            stage_area_km2[usize::from(code)] += self.cell_area_km2;
            if code != vegetation_code::ICE {
                ice_free += 1;
                for (t, mean) in mean_cover.iter_mut().enumerate().take(self.types.len()) {
                    *mean += f64::from(self.state.cover[t * n + i]);
                }
            }
        }
        for mean in mean_cover.iter_mut() {
            *mean /= ice_free.max(1) as f64;
        }
        VegetationYearSummary {
            year,
            stage_area_km2,
            mean_cover,
            n_types: self.types.len(),
            long_distance_events: 0,
        }
    }

    /// Schedules a disturbance; its cells must lie on the grid.
    pub fn add_disturbance(&mut self, event: Disturbance) -> Result<(), VegetationError> {
        let n = self.state.n_cells;
        if let Some(&bad) = event.cells.iter().find(|&&c| c as usize >= n) {
            return Err(VegetationError::Invalid {
                field: "disturbance cells".to_string(),
                problem: format!("cell {bad} is outside the grid of {n} cells"),
            });
        }
        let bank_len = if event.kind == DisturbanceKind::Burn {
            event.cells.len() * self.types.len()
        } else {
            0
        };
        self.disturbances.push(ScheduledDisturbance {
            event,
            bank_seeds: vec![0.0; bank_len],
        });
        Ok(())
    }

    /// The state at the end of the last simulated year.
    pub fn state(&self) -> &VegetationState {
        &self.state
    }

    /// Succession stage layer.
    pub fn stage(&self) -> &[u8] {
        &self.state.stage
    }

    /// Soil development layer.
    pub fn soil(&self) -> &[f32] {
        &self.state.soil
    }

    /// Cover layer of one type.
    pub fn cover_of(&self, type_idx: usize) -> &[f32] {
        self.state.cover_of(type_idx)
    }

    pub fn n_types(&self) -> usize {
        self.types.len()
    }

    /// Growing-season temperature of a cell with no anomaly, degrees C.
    pub fn base_temperature_c(&self, cell: usize) -> f32 {
        self.temp_base_c[cell]
    }

    fn cell_cover(&self, i: usize) -> CellCover {
        let n = self.state.n_cells;
        let mut cover = CellCover::default();
        for (t, setup) in self.types.iter().enumerate() {
            let c = self.state.cover[t * n + i];
            cover.total += c;
            match setup.form {
                GrowthForm::Graminoid => cover.graminoid += c,
                GrowthForm::Shrub => cover.woody += c,
                GrowthForm::Tree => {
                    cover.woody += c;
                    cover.tree += c;
                    if c >= 0.05 {
                        cover.oldest_tree_age_a =
                            cover.oldest_tree_age_a.max(self.state.age_a[t * n + i]);
                    }
                }
                GrowthForm::PioneerHerb => {}
            }
        }
        cover
    }

    /// Simulates `year` given the ice at its end, the exposure years and the temperature
    /// anomaly. Allocates nothing.
    pub fn step_year(
        &mut self,
        year: i32,
        ice_thickness_m: &[f32],
        year_exposed: &[i32],
        temperature_anomaly_c: f64,
    ) -> VegetationYearSummary {
        let n = self.state.n_cells;
        debug_assert!(ice_thickness_m.len() == n && year_exposed.len() == n);
        self.strike_disturbances(year);
        let anomaly = temperature_anomaly_c as f32;
        // Soil first: it reads only last year's cover, and with this year's soil known a
        // type's seed rain is filtered only for rows where some chunk will read it.
        self.classify_and_develop_soil(year, ice_thickness_m, year_exposed, anomaly);
        let mut long_distance_events = 0u32;
        for t in 0..self.types.len() {
            let n_cols = self.n_cols;
            for row in 0..self.n_rows {
                let chunks = row * n_cols / CHUNK..((row + 1) * n_cols).div_ceil(CHUNK);
                self.rows_needed[row] = chunks
                    .into_iter()
                    .any(|chunk| self.chunk_grows(t, chunk, anomaly));
            }
            long_distance_events += self.disperse(t, year);
        }
        // Cells in blocks small enough that the per-block sums stay in the first-level
        // cache while every type passes over them, tallest first.
        let mut cover_sums = [0.0f64; MAX_TYPES];
        let mut stage_cells = [0usize; N_STAGES];
        let mut start = 0;
        while start < n {
            let end = (start + BLOCK).min(n);
            self.update_block(start..end, year, anomaly, &mut cover_sums, &mut stage_cells);
            start = end;
        }
        let ice_free_cells = n - stage_cells[usize::from(vegetation_code::ICE)] - self.n_invalid;
        stage_cells[usize::from(vegetation_code::ICE)] -= self.n_invalid;
        let mut stage_area_km2 = [0.0; N_STAGES];
        for (area, &count) in stage_area_km2.iter_mut().zip(&stage_cells) {
            *area = count as f64 * self.cell_area_km2;
        }
        let mut mean_cover = [0.0; MAX_TYPES];
        for (mean, &sum) in mean_cover
            .iter_mut()
            .zip(&cover_sums)
            .take(self.types.len())
        {
            *mean = if ice_free_cells > 0 {
                sum / ice_free_cells as f64
            } else {
                0.0
            };
        }
        VegetationYearSummary {
            year,
            stage_area_km2,
            mean_cover,
            n_types: self.types.len(),
            long_distance_events,
        }
    }

    /// Whether type `t` needs updating in `chunk` this year: it is there, or some cell of
    /// the chunk may be warm, developed and flat enough for it. Reads this year's soil.
    fn chunk_grows(&self, t: usize, chunk: usize, anomaly_c: f32) -> bool {
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
    fn classify_and_develop_soil(
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
    fn update_block(
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

    /// Clears cover (and for debris flows soil) where this year's events strike; burns
    /// put the burnt types' seed into the bank.
    fn strike_disturbances(&mut self, year: i32) {
        let n = self.state.n_cells;
        let years_of_seed = self.seed_bank.years_of_seed as f32;
        let per_year = years_of_seed / self.seed_bank.duration_a as f32;
        for scheduled in &mut self.disturbances {
            if scheduled.event.year != year {
                continue;
            }
            let n_event = scheduled.event.cells.len();
            for (j, &cell) in scheduled.event.cells.iter().enumerate() {
                let i = cell as usize;
                for (t, setup) in self.types.iter().enumerate() {
                    if scheduled.event.kind == DisturbanceKind::Burn {
                        scheduled.bank_seeds[t * n_event + j] =
                            self.state.cover[t * n + i] * setup.seeds_per_cover * per_year;
                    }
                    self.state.cover[t * n + i] = 0.0;
                    self.state.age_a[t * n + i] = 0.0;
                    self.chunk_established[t * n.div_ceil(CHUNK) + i / CHUNK] = false;
                }
                if scheduled.event.kind == DisturbanceKind::DebrisFlow {
                    self.state.soil[i] = 0.0;
                }
            }
        }
    }

    /// Seed rain of type `t` into its rain layer: local kernel, seed bank, long-distance
    /// events. Returns the number of events drawn.
    ///
    /// The local kernel is exact only in the rows of `rows_needed`; no other row's rain
    /// is read this year.
    fn disperse(&mut self, t: usize, year: i32) -> u32 {
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
fn seed_of(cover: f32, age_a: f32, first_seed_age_a: f32, per_cover: f32) -> f32 {
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
fn production_row(
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

/// A Poisson draw (Knuth's product method below 30, a rounded normal above).
fn poisson<R: Rng + ?Sized>(rng: &mut R, mean: f64) -> usize {
    if mean < 30.0 {
        let limit = libm::exp(-mean);
        let mut product = uniform_open(rng);
        let mut k = 0;
        while product > limit {
            product *= uniform_open(rng);
            k += 1;
        }
        k
    } else {
        let z = (-2.0 * libm::log(uniform_open(rng))).sqrt()
            * libm::cos(std::f64::consts::TAU * uniform_open(rng));
        (mean + mean.sqrt() * z).round().max(0.0) as usize
    }
}

/// Per-cell layers one type's update reads.
struct CellInputs<'a> {
    kind: &'a [f32],
    temp_base_c: &'a [f32],
    soil: &'a [f32],
    slope_deg: &'a [f32],
    rain: &'a [f32],
}

/// Per-cell sums over the types updated so far this year.
struct FormSums<'a> {
    canopy: &'a mut [f32],
    graminoid: &'a mut [f32],
    woody: &'a mut [f32],
    tree: &'a mut [f32],
    oldest_tree_age_a: &'a mut [f32],
}

/// The cell loop of one type in [`VegetationModel::update_block`], over slices of one length so that the
/// compiler drops bounds checks.
#[allow(clippy::too_many_arguments)]
fn grow_cells<const ESTABLISHED: bool, const FORM: u8>(
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
const HERB: u8 = 0;
const GRAMINOID: u8 = 1;
const SHRUB: u8 = 2;
const TREE: u8 = 3;

/// Whether some cell of a chunk without the type may see it establish this year. The draw
/// must fall below P(lambda) <= lambda <= seed rain x establishment per seed (suitability,
/// light and free space are each at most 1; the fast exponential of
/// [`establishment_probability`](crate::plants::establishment::establishment_probability) errs by
/// far less than lambda), so where every draw is at least twice that bound the update
/// leaves every cell empty and every sum as it was: skipping it changes no bit.
fn may_establish(key: u32, first_cell: u32, rain: &[f32], per_seed: f32) -> bool {
    let mut any = false;
    for (i, &seeds) in rain.iter().enumerate() {
        let uniform = hash_uniform(key ^ (first_cell + i as u32));
        any |= uniform < 2.0 * seeds * per_seed;
    }
    any
}

/// Whether a type needs its update in a chunk: it is there, or the warmest cell is warm
/// enough, the most developed soil developed enough and the gentlest slope flat enough.
fn chunk_grows(
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

/// Sum of a layer in f32 lanes, then f64 (lanes keep the loop vectorised).
fn lane_sum(values: &[f32]) -> f64 {
    let mut total = 0.0f64;
    for chunk in values.chunks(4096) {
        let mut lanes = [0.0f32; 16];
        let mut blocks = chunk.chunks_exact(16);
        for block in &mut blocks {
            for (lane, &v) in lanes.iter_mut().zip(block) {
                *lane += v;
            }
        }
        let rest: f32 = blocks.remainder().iter().sum();
        total += f64::from(lanes.iter().sum::<f32>() + rest);
    }
    total
}

/// Largest value of a chunk, in lanes so that it vectorises (comparisons, no `f32::max`).
fn chunk_max(values: &[f32]) -> f32 {
    let mut lanes = [f32::NEG_INFINITY; 16];
    let mut blocks = values.chunks_exact(16);
    for block in &mut blocks {
        for (lane, &v) in lanes.iter_mut().zip(block) {
            *lane = larger(*lane, v);
        }
    }
    let rest = blocks
        .remainder()
        .iter()
        .fold(f32::NEG_INFINITY, |a, &v| larger(a, v));
    lanes.iter().fold(rest, |a, &v| larger(a, v))
}

/// Whether every value of a chunk is above zero.
fn all_positive(values: &[f32]) -> bool {
    values.iter().fold(true, |all, &v| all & (v > 0.0))
}

/// Largest negated value of a chunk: minus its smallest value.
fn chunk_max_negated(values: &[f32]) -> f32 {
    values.iter().fold(f32::NEG_INFINITY, |a, &v| larger(a, -v))
}

/// Key of one year's establishment draws of type `t`.
fn draw_key(seed: u64, year: i32, t: usize) -> u32 {
    let mixed =
        seed ^ (u64::from(year as u32) << 8) ^ (t as u64).wrapping_mul(0xD6E8_FEB8_6659_FD93);
    let folded = (mixed ^ (mixed >> 32)) as u32;
    hash32(folded.wrapping_add(0x632B_E5AB))
}

/// A 32-bit integer hash with good avalanche ("lowbias32" of Wellons' hash prospector,
/// 2018, from memory): two multiply-xorshift rounds.
#[inline]
fn hash32(x: u32) -> u32 {
    let mut x = x;
    x ^= x >> 16;
    x = x.wrapping_mul(0x7FEB_352D);
    x ^= x >> 15;
    x = x.wrapping_mul(0x846C_A68B);
    x ^= x >> 16;
    x
}

/// A uniform number in [0, 1) from the hash of a counter; fine resolution near 0, where
/// small establishment probabilities are compared.
#[inline]
fn hash_uniform(counter: u32) -> f32 {
    (hash32(counter) >> 1) as i32 as f32 * (1.0 / 2_147_483_648.0)
}
