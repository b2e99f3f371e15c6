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

use rand::SeedableRng;
use rand_pcg::Pcg32;
use serde::{Deserialize, Serialize};

use crate::base::grid::GridGeometry;
use crate::ice::exposure::ICE_COVER_THRESHOLD_M;
use crate::plants::chunks::{all_positive, chunk_max, chunk_max_negated};
use crate::plants::dispersal::{Boundary, DispersalOperator, DispersalScratch};
use crate::plants::disturbance::{
    Disturbance, DisturbanceKind, ScheduledDisturbance, SeedBankParams,
};
use crate::plants::establishment::{suitability, GrowingSeasonParams, TypeRates};
use crate::plants::kernels::{validate_kernel, Kernel};
use crate::plants::pft::{check_range, GrowthForm, PlantType, VegetationError, MAX_TYPES};
use crate::plants::soil::{moisture_proxy, SoilParams};
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
pub(super) const EXTINCT_COVER: f32 = 1e-5;

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
pub(super) struct StageStart {
    pub(super) cover: [f32; 4],
    pub(super) soil: f32,
    pub(super) tree_age_a: f32,
}

pub(super) const STAGE_START: [StageStart; N_STAGES] = [
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

pub(super) fn form_index(form: GrowthForm) -> usize {
    match form {
        GrowthForm::PioneerHerb => 0,
        GrowthForm::Graminoid => 1,
        GrowthForm::Shrub => 2,
        GrowthForm::Tree => 3,
    }
}

/// Per-type constants of the yearly loop.
#[derive(Clone, Debug)]
pub(super) struct TypeSetup {
    pub(super) rates: TypeRates,
    pub(super) form: GrowthForm,
    pub(super) nitrogen_fixer: bool,
    pub(super) age_first_seed_a: f32,
    /// Seeds per cell per unit cover per year.
    pub(super) seeds_per_cover: f32,
    pub(super) long_distance_share: f32,
    pub(super) long_distance_kernel: Kernel,
    pub(super) operator: DispersalOperator,
}

/// The yearly stepper: state, site constants and scratch memory.
#[derive(Clone, Debug)]
pub struct VegetationModel {
    pub(super) n_cols: usize,
    pub(super) n_rows: usize,
    pub(super) cell_size_m: f64,
    pub(super) cell_area_km2: f64,
    pub(super) state: VegetationState,
    pub(super) valid: Vec<bool>,
    pub(super) temp_base_c: Vec<f32>,
    pub(super) slope_deg: Vec<f32>,
    pub(super) soil_site_rate: Vec<f32>,
    pub(super) soil: SoilParams,
    pub(super) fixer_boost: f32,
    pub(super) thresholds: StageThresholds32,
    pub(super) seed_bank: SeedBankParams,
    pub(super) types: Vec<TypeSetup>,
    /// Type indices, tallest first.
    pub(super) order: Vec<usize>,
    /// Soil temperature factor at each cell's base temperature (no anomaly).
    pub(super) soil_temp_factor: Vec<f32>,
    /// Nodata cells (always stage ice, left out of the summary).
    pub(super) n_invalid: usize,
    /// Seed from which each year's establishment draws are keyed.
    pub(super) establishment_key: u64,
    pub(super) scratch: DispersalScratch,
    /// One row of seed production.
    pub(super) production_row: Vec<f32>,
    pub(super) rain: Vec<f32>,
    pub(super) row_production: Vec<f64>,
    /// Per cell and year: [`CELL_OPEN`], [`CELL_FRESH`] or [`CELL_CLOSED`] (`f32` codes,
    /// so the cell loop has one lane width).
    pub(super) cell_kind: Vec<f32>,
    /// Per-cell sums of one block over the types updated so far this year: all cover (the
    /// canopy the next shorter type grows under), graminoid, woody and tree cover, oldest
    /// tree age.
    pub(super) block_sums: [Vec<f32>; 5],
    pub(super) rng: Pcg32,
    pub(super) disturbances: Vec<ScheduledDisturbance>,
    /// Per chunk of [`CHUNK`] cells: warmest base temperature and gentlest slope.
    pub(super) chunk_max_temp_c: Vec<f32>,
    pub(super) chunk_min_slope_deg: Vec<f32>,
    /// Per chunk and year: richest soil of its open or fresh cells (-1 if none).
    pub(super) chunk_max_soil: Vec<f32>,
    /// Per type and chunk (type-major): whether the type had cover there last year.
    pub(super) chunk_occupied: Vec<bool>,
    /// Per type and chunk: whether the type had cover in every cell there last year.
    pub(super) chunk_established: Vec<bool>,
    /// Per chunk and year: whether every cell is open (neither fresh nor closed).
    pub(super) chunk_open: Vec<bool>,
    /// Per row: whether the type being dispersed needs updating in some chunk of it.
    pub(super) rows_needed: Vec<bool>,
}

/// Cells per block of the yearly update.
pub(super) const BLOCK: usize = 1024;

/// Cells per chunk: a type is skipped in a chunk where it had no cover last year and no
/// cell can take it this year (too cold, too poor or too steep everywhere), where the
/// update would leave every value as it is.
pub(super) const CHUNK: usize = 64;

/// Ice-free ground that was ice-free last year too.
pub(super) const CELL_OPEN: f32 = 0.0;
/// Ground the ice left this year: no plants, no soil yet, colonisable.
pub(super) const CELL_FRESH: f32 = 1.0;
/// Under ice or nodata: nothing grows.
pub(super) const CELL_CLOSED: f32 = 2.0;

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

    pub(super) fn cell_cover(&self, i: usize) -> CellCover {
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

    /// Clears cover (and for debris flows soil) where this year's events strike; burns
    /// put the burnt types' seed into the bank.
    pub(super) fn strike_disturbances(&mut self, year: i32) {
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
}
