//! The yearly colonisation model: soil development, seed production and dispersal (the
//! integrodifference step of Kot, Lewis & van den Driessche 1996, Ecology 77:2027, with the
//! kernels of Clark et al. 1999, Ecology 80:1475), long-distance events, establishment,
//! logistic growth under shading, mortality, disturbance and succession stage per cell.
//!
//! State is plain data ([`VegetationState`]: covers, ages, soil, stage as flat layers, one
//! layer per type for covers and ages); [`VegetationModel`] owns the state, the per-cell
//! site constants and every scratch buffer, so [`VegetationModel::step_year`] allocates
//! nothing. Randomness (long-distance events and first establishment in a cell) comes from
//! one PCG generator (O'Neill 2014) seeded from the scenario, drawn in a fixed order.

use rand::{Rng, SeedableRng};
use rand_pcg::Pcg32;
use serde::{Deserialize, Serialize};

use crate::dispersal::{
    uniform_open, validate_kernel, Boundary, DispersalOperator, DispersalScratch, Kernel,
};
use crate::disturbance::{Disturbance, DisturbanceKind, ScheduledDisturbance, SeedBankParams};
use crate::establishment::{suitability, update_cover, GrowingSeasonParams, TypeRates};
use crate::exposure::ICE_COVER_THRESHOLD_M;
use crate::grid::GridGeometry;
use crate::pft::{check_range, GrowthForm, PlantType, VegetationError, MAX_TYPES};
use crate::sample::vegetation_code;
use crate::soil::{develop, moisture_proxy, SoilParams};
use crate::succession::{stage, CellCover, StageThresholds, StageThresholds32};

/// Number of succession stages (codes 0 to 6).
pub const N_STAGES: usize = 7;

/// Most long-distance events drawn per type and year; beyond it each event carries more
/// seed, so the cost stays bounded on large grids.
pub const MAX_LONG_DISTANCE_EVENTS: usize = 256;

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
    /// keeps the error against a direct convolution near 1 % (reference checks).
    pub dispersal_cell_size_m: f64,
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
    /// Years since the type established in the cell (0 where absent), type-major.
    pub age_a: Vec<u16>,
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
    pub fn age_of(&self, type_idx: usize) -> &[u16] {
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
    tree_age_a: u16,
}

const STAGE_START: [StageStart; N_STAGES] = [
    StageStart {
        cover: [0.0, 0.0, 0.0, 0.0],
        soil: 0.0,
        tree_age_a: 0,
    },
    StageStart {
        cover: [0.0, 0.0, 0.0, 0.0],
        soil: 0.05,
        tree_age_a: 0,
    },
    StageStart {
        cover: [0.15, 0.0, 0.0, 0.0],
        soil: 0.1,
        tree_age_a: 0,
    },
    StageStart {
        cover: [0.1, 0.6, 0.0, 0.0],
        soil: 0.4,
        tree_age_a: 0,
    },
    StageStart {
        cover: [0.05, 0.3, 0.5, 0.0],
        soil: 0.6,
        tree_age_a: 0,
    },
    StageStart {
        cover: [0.0, 0.2, 0.2, 0.45],
        soil: 0.8,
        tree_age_a: 40,
    },
    StageStart {
        cover: [0.0, 0.1, 0.1, 0.75],
        soil: 1.0,
        tree_age_a: 150,
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
    age_first_seed_a: u16,
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
    scratch: DispersalScratch,
    production: Vec<f32>,
    rain: Vec<f32>,
    row_production: Vec<f64>,
    rng: Pcg32,
    disturbances: Vec<ScheduledDisturbance>,
}

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
                    age_first_seed_a: t.age_first_seed_a.round() as u16,
                    seeds_per_cover: t.fecundity_per_m2_a as f32 * cell_area_m2,
                    long_distance_share: t.long_distance_share as f32,
                    long_distance_kernel,
                    operator: DispersalOperator::new(
                        &kernel,
                        cell_size_m,
                        n_cols,
                        n_rows,
                        base_factor,
                        Boundary::Absorbing,
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
            age_a: vec![0; n_types * n],
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
                            setup.age_first_seed_a.saturating_add(10)
                        };
                        (start.cover[form] / same_form as f32, age)
                    }
                    None => {
                        let potential = params.types[t].potential_cover(f64::from(suit)) as f32;
                        (potential, setup.age_first_seed_a.saturating_add(100))
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
            production: vec![0.0; n],
            rain: vec![0.0; n_types * n],
            row_production: vec![0.0; n_rows],
            rng: Pcg32::seed_from_u64(seed),
            disturbances: Vec::new(),
        };
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
                        cover.oldest_tree_age_a = cover
                            .oldest_tree_age_a
                            .max(f32::from(self.state.age_a[t * n + i]));
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
        let mut long_distance_events = 0u32;
        for t in 0..self.types.len() {
            long_distance_events += self.disperse(t, year);
        }
        let anomaly = temperature_anomaly_c as f32;
        let mut stage_cells = [0usize; N_STAGES];
        let mut cover_sums = [0.0f64; MAX_TYPES];
        let mut ice_free_cells = 0usize;
        for i in 0..n {
            if !self.valid[i] {
                continue;
            }
            if ice_thickness_m[i] >= ICE_COVER_THRESHOLD_M || year_exposed[i] == year {
                // Under ice, or just out of it: no plants and no soil (glacial scour).
                for t in 0..self.types.len() {
                    self.state.cover[t * n + i] = 0.0;
                    self.state.age_a[t * n + i] = 0;
                }
                self.state.soil[i] = 0.0;
                if ice_thickness_m[i] >= ICE_COVER_THRESHOLD_M {
                    self.state.stage[i] = vegetation_code::ICE;
                    stage_cells[usize::from(vegetation_code::ICE)] += 1;
                    continue;
                }
            }
            ice_free_cells += 1;
            let temp = self.temp_base_c[i] + anomaly;
            let mut fixer_cover = 0.0f32;
            for (t, setup) in self.types.iter().enumerate() {
                if setup.nitrogen_fixer {
                    fixer_cover += self.state.cover[t * n + i];
                }
            }
            let soil = develop(
                self.state.soil[i],
                self.soil_site_rate[i],
                self.soil.temperature_factor(temp),
                1.0 + self.fixer_boost * fixer_cover,
            );
            self.state.soil[i] = soil;
            let mut canopy = 0.0f32;
            for &t in &self.order {
                let setup = &self.types[t];
                let idx = t * n + i;
                let cover = self.state.cover[idx];
                let suit = suitability(&setup.rates, temp, soil, self.slope_deg[i]);
                let seeds = self.rain[idx];
                let uniform = if cover <= 0.0 && seeds > 0.0 && suit > 0.0 {
                    uniform_open(&mut self.rng) as f32
                } else {
                    1.0
                };
                let mut c = update_cover(&setup.rates, cover, suit, canopy, seeds, uniform);
                if c < EXTINCT_COVER {
                    c = 0.0;
                    self.state.age_a[idx] = 0;
                } else {
                    self.state.age_a[idx] = self.state.age_a[idx].saturating_add(1);
                }
                self.state.cover[idx] = c;
                canopy += c;
                cover_sums[t] += f64::from(c);
            }
            let code = stage(&self.cell_cover(i), &self.thresholds);
            self.state.stage[i] = code;
            stage_cells[usize::from(code)] += 1;
        }
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
                    self.state.age_a[t * n + i] = 0;
                }
                if scheduled.event.kind == DisturbanceKind::DebrisFlow {
                    self.state.soil[i] = 0.0;
                }
            }
        }
    }

    /// Seed rain of type `t` into its rain layer: local kernel, seed bank, long-distance
    /// events. Returns the number of events drawn.
    fn disperse(&mut self, t: usize, year: i32) -> u32 {
        let n = self.state.n_cells;
        let n_cols = self.n_cols;
        let setup = &self.types[t];
        let cover = &self.state.cover[t * n..(t + 1) * n];
        let ages = &self.state.age_a[t * n..(t + 1) * n];
        let local = setup.seeds_per_cover * (1.0 - setup.long_distance_share);
        let mut total = 0.0f64;
        for row in 0..self.n_rows {
            let cells = row * n_cols..(row + 1) * n_cols;
            let mut row_sum = 0.0f32;
            for ((p, &c), &age) in self.production[cells.clone()]
                .iter_mut()
                .zip(&cover[cells.clone()])
                .zip(&ages[cells])
            {
                *p = if age >= setup.age_first_seed_a {
                    c * local
                } else {
                    0.0
                };
                row_sum += *p;
            }
            total += f64::from(row_sum);
            self.row_production[row] = total;
        }
        let rain = &mut self.rain[t * n..(t + 1) * n];
        if total <= 0.0 {
            rain.fill(0.0);
        } else {
            setup
                .operator
                .apply(&self.production, rain, &mut self.scratch);
        }
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
            let mut left = (target - before) as f32;
            let mut col = n_cols - 1;
            for (c, &p) in self.production[row * n_cols..(row + 1) * n_cols]
                .iter()
                .enumerate()
            {
                left -= p;
                if left <= 0.0 {
                    col = c;
                    break;
                }
            }
            let distance =
                setup.long_distance_kernel.sample_distance_m(&mut self.rng) / self.cell_size_m;
            let angle = std::f64::consts::TAU * uniform_open(&mut self.rng);
            let x = col as f64 + 0.5 + distance * angle.cos();
            let y = row as f64 + 0.5 + distance * angle.sin();
            if x >= 0.0 && y >= 0.0 && x < n_cols as f64 && y < self.n_rows as f64 {
                rain[y as usize * n_cols + x as usize] += seeds;
            }
        }
        n_events as u32
    }
}

/// A Poisson draw (Knuth's product method below 30, a rounded normal above).
fn poisson<R: Rng + ?Sized>(rng: &mut R, mean: f64) -> usize {
    if mean < 30.0 {
        let limit = (-mean).exp();
        let mut product = uniform_open(rng);
        let mut k = 0;
        while product > limit {
            product *= uniform_open(rng);
            k += 1;
        }
        k
    } else {
        let z = (-2.0 * uniform_open(rng).ln()).sqrt()
            * (std::f64::consts::TAU * uniform_open(rng)).cos();
        (mean + mean.sqrt() * z).round().max(0.0) as usize
    }
}
