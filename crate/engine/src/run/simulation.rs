//! The yearly ice run: climate anomaly -> ELA and balance profile -> shallow-ice flow on a
//! coarser ice grid -> conservative transfer back to the input grid -> exposure years.
//!
//! Ice grid. The input grid (the plants' grid, e.g. 25 m) is aggregated into blocks of
//! `k x k` cells, k the whole number nearest `flow.ice_cell_size_m / cell_size_m`: the
//! shallow-ice approximation only holds over distances of several ice thicknesses, and the
//! explicit step grows with the square of the cell size, so a 100 m ice grid beside 25 m
//! plant cells costs 1/256 of running the ice at 25 m. Transfer is conservative both ways:
//! a block's ice thickness is the block's ice volume over the block area (missing cells count
//! as ice-free), and back on the fine grid each block's volume is spread over its valid cells
//! as the bilinear ice-grid surface less the fine bed, floored at zero, with the block's
//! surface shifted up or down so it keeps exactly its volume: margins follow the fine ground
//! (common practice, no source).
//!
//! Conventions. The grids describe the end of `start_year`. `step_year` simulates the next
//! calendar year Y with the anomaly dT(Y) and returns the summary of the state at its end; a
//! cell exposed during Y has `year_exposed = Y`. The grid edge is closed to ice flow.
//!
//! Start-up. Before the first year the ELA is calibrated on the given glacier unless the
//! scenario fixes it (`ela_calibration`), the glacier domain is found (`glacier_domain`), and
//! the ice relaxes for `relaxation_years` at the start year's climate: a thickness grid from
//! a survey or an estimate is not in balance with the model's flow, and without relaxation
//! the first years would show that adjustment as if it were climate. The timeline starts
//! from the relaxed ice; the volume change is reported.

use thiserror::Error;

use crate::base::grid::{Grid, GridGeometry};
use crate::ice::climate::ClimateTrajectory;
use crate::ice::ela_calibration::{
    aar_ela_m, ela_for_mean_balance, CalibrationError, ElaCalibration, ElaMethod,
};
use crate::ice::exposure::{ExposureTracker, ICE_COVER_THRESHOLD_M};
use crate::ice::flow::{positive_part, AdvanceReport, CellBox, FlowError, SiaStepper};
use crate::ice::glacier_domain::{block_fractions, drainage_domain};
use crate::ice::mass_balance::{DomainRule, LinearBalance, MassBalanceParams, WATER_DENSITY_KG_M3};
use crate::ice::snow_redistribution::SnowRedistribution;
use crate::run::scenario::{Scenario, ScenarioError};

/// Largest initial ice thickness accepted, m (thicker than any mountain glacier).
pub const MAX_INITIAL_THICKNESS_M: f32 = 2000.0;

/// Bed elevations accepted, m above sea level.
pub const BED_RANGE_M: (f32, f32) = (-1000.0, 9000.0);

/// One row of the yearly summary.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct YearSummary {
    /// Calendar year; the state is that at the end of the year.
    pub year: i32,
    /// Temperature anomaly that drove the year, degrees C.
    pub temperature_anomaly_c: f64,
    /// Equilibrium-line altitude of the year, m.
    pub ela_m: f64,
    /// Area with ice at least 1 m thick, km^2.
    pub ice_area_km2: f64,
    /// Ice volume, km^3 (ice, not water equivalent).
    pub ice_volume_km3: f64,
    /// Area that became ice-free during the year, km^2.
    pub newly_exposed_area_km2: f64,
    /// Largest ice thickness on the input grid, m.
    pub max_thickness_m: f64,
    /// Explicit flow substeps taken in the year.
    pub substeps: u32,
    /// Ice-grid cells updated in the year, summed over substeps (cost measure).
    pub cell_updates: u64,
}

/// A simulation could not be built from these inputs.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum SimulationError {
    #[error(transparent)]
    Scenario(#[from] ScenarioError),
    #[error("ice grid: {0}")]
    Flow(#[from] FlowError),
    #[error(
        "{layer} grid does not line up with the bed grid (size, cell size, origin or CRS differ)"
    )]
    Misaligned { layer: &'static str },
    #[error("{layer} = {value} m at row {row}, column {col} is outside the valid range {min} to {max} m")]
    ValueOutOfRange {
        layer: &'static str,
        row: usize,
        col: usize,
        value: f32,
        min: f32,
        max: f32,
    },
    #[error("the bed grid has no valid cell")]
    EmptyBed,
    #[error("the grid is {n_cols} x {n_rows} cells; the ice model needs at least 3 x 3")]
    TooSmall { n_cols: usize, n_rows: usize },
    #[error(transparent)]
    Calibration(#[from] CalibrationError),
}

/// What the start-up relaxation did.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct RelaxationReport {
    /// Years relaxed at the start year's climate before the start year.
    pub years: u32,
    /// Ice volume before and after, km^3.
    pub volume_before_km3: f64,
    pub volume_after_km3: f64,
}

impl RelaxationReport {
    /// One line for the run status and provenance.
    pub fn describe(&self) -> String {
        if self.years == 0 {
            return "no start-up relaxation".to_string();
        }
        let change = self.volume_after_km3 - self.volume_before_km3;
        let percent = if self.volume_before_km3 > 0.0 {
            100.0 * change / self.volume_before_km3
        } else {
            0.0
        };
        format!(
            "ice relaxed {} years at the start climate: volume {:.4} to {:.4} km³ ({percent:+.1} %)",
            self.years, self.volume_before_km3, self.volume_after_km3
        )
    }
}

/// Bed elevation from a surface and a thickness grid: b = s - H (nodata thickness = no ice).
pub fn bed_from_surface(surface_m: &Grid, ice_thickness_m: &Grid) -> Result<Grid, SimulationError> {
    if !surface_m.geometry.aligns_with(&ice_thickness_m.geometry) {
        return Err(SimulationError::Misaligned {
            layer: "ice thickness",
        });
    }
    let mut bed = surface_m.clone();
    for ((b, &h), &missing) in bed
        .values
        .iter_mut()
        .zip(&ice_thickness_m.values)
        .zip(&ice_thickness_m.nodata)
    {
        if !missing {
            *b -= h;
        }
    }
    Ok(bed)
}

/// A running ice simulation over one set of grids and one scenario.
#[derive(Clone, Debug)]
pub struct IceSimulation {
    geometry: GridGeometry,
    /// Input cells per ice cell along each axis.
    block: usize,
    ice_cols: usize,
    ice_rows: usize,
    climate: ClimateTrajectory,
    mass_balance: MassBalanceParams,
    calibration: ElaCalibration,
    relaxation: RelaxationReport,
    ice_density_kg_m3: f64,
    /// Fine cells where the balance may add ice.
    domain: Vec<bool>,
    /// Whether the domain came from a grid the planner gave.
    domain_given: bool,
    /// Snow redistribution on the ice grid, with its scratch fields.
    redistribution: Option<SnowRedistribution>,
    surface_scratch: Vec<f64>,
    snowfall_scratch: Vec<f64>,
    kept_scratch: Vec<f64>,
    start_year: i32,
    end_year: i32,
    /// Last year whose end state is held.
    year: i32,
    stepper: SiaStepper,
    ice_grid_thickness_m: Vec<f64>,
    valid: Vec<bool>,
    ice_thickness_m: Vec<f32>,
    exposure: ExposureTracker,
    summary: Vec<YearSummary>,
    ice_box: Option<CellBox>,
    /// Scratch for one block's surface-less-bed values and their sorted copy.
    block_scratch: Vec<f64>,
    /// The input grid's bed, for placing ice within a block (nodata cells hold 0).
    fine_bed_m: Vec<f32>,
    /// Valid fine cells of each ice-grid block.
    block_valid: Vec<usize>,
    /// First year (the start year for the relaxed start) the ice touched the grid edge.
    edge_year: Option<i32>,
    /// The growing-season temperature at the ELA against the treeline, for the start notes.
    treeline_note: String,
}

impl IceSimulation {
    /// Validates the scenario and grids and prepares the run. `ice_thickness_m` nodata
    /// counts as no ice; bed nodata cells are closed to ice. The glacier domain follows the
    /// scenario's rule (see [`IceSimulation::with_domain`]).
    pub fn new(
        bed_m: &Grid,
        ice_thickness_m: &Grid,
        scenario: &Scenario,
    ) -> Result<Self, SimulationError> {
        Self::with_domain(bed_m, ice_thickness_m, None, scenario)
    }

    /// As [`IceSimulation::new`], with the glacier domain given as a grid on the bed's cells
    /// (a value above zero marks the domain; nodata is outside), or `None` for the scenario's
    /// rule.
    pub fn with_domain(
        bed_m: &Grid,
        ice_thickness_m: &Grid,
        domain_grid: Option<&Grid>,
        scenario: &Scenario,
    ) -> Result<Self, SimulationError> {
        scenario.validate()?;
        let geometry = bed_m.geometry;
        if !geometry.aligns_with(&ice_thickness_m.geometry) {
            return Err(SimulationError::Misaligned {
                layer: "ice thickness",
            });
        }
        if let Some(d) = domain_grid {
            if !geometry.aligns_with(&d.geometry) {
                return Err(SimulationError::Misaligned {
                    layer: "glacier domain",
                });
            }
        }
        let (n_cols, n_rows) = (geometry.n_cols, geometry.n_rows);
        if n_cols < 3 || n_rows < 3 {
            return Err(SimulationError::TooSmall { n_cols, n_rows });
        }
        let valid: Vec<bool> = bed_m.nodata.iter().map(|&missing| !missing).collect();
        if !valid.iter().any(|&v| v) {
            return Err(SimulationError::EmptyBed);
        }
        let mut thickness = vec![0.0_f32; n_cols * n_rows];
        for idx in 0..n_cols * n_rows {
            let (row, col) = (idx / n_cols, idx % n_cols);
            if valid[idx] {
                let z = bed_m.values[idx];
                if !(z >= BED_RANGE_M.0 && z <= BED_RANGE_M.1) {
                    return Err(SimulationError::ValueOutOfRange {
                        layer: "bed elevation",
                        row,
                        col,
                        value: z,
                        min: BED_RANGE_M.0,
                        max: BED_RANGE_M.1,
                    });
                }
            }
            if ice_thickness_m.nodata[idx] {
                continue;
            }
            let h = ice_thickness_m.values[idx];
            if !(0.0..=MAX_INITIAL_THICKNESS_M).contains(&h) {
                return Err(SimulationError::ValueOutOfRange {
                    layer: "ice thickness",
                    row,
                    col,
                    value: h,
                    min: 0.0,
                    max: MAX_INITIAL_THICKNESS_M,
                });
            }
            if valid[idx] {
                thickness[idx] = h;
            }
        }

        let mut block =
            ((scenario.flow.ice_cell_size_m / geometry.cell_size_m).round() as usize).max(1);
        while block > 1 && (n_cols.div_ceil(block) < 3 || n_rows.div_ceil(block) < 3) {
            block -= 1;
        }
        let (ice_cols, ice_rows) = (n_cols.div_ceil(block), n_rows.div_ceil(block));
        let n_ice = ice_cols * ice_rows;
        let mut bed_sum = vec![0.0_f64; n_ice];
        let mut n_valid = vec![0usize; n_ice];
        let mut ice_sum = vec![0.0_f64; n_ice];
        // Fine cells of the starting glacier (at least 1 m of ice) per block: the weights of
        // the glacier-wide mean balance.
        let mut glacier_cells = vec![0usize; n_ice];
        for idx in 0..n_cols * n_rows {
            if !valid[idx] {
                continue;
            }
            let ice_idx = (idx / n_cols / block) * ice_cols + (idx % n_cols) / block;
            bed_sum[ice_idx] += f64::from(bed_m.values[idx]);
            n_valid[ice_idx] += 1;
            ice_sum[ice_idx] += f64::from(thickness[idx]);
            glacier_cells[ice_idx] += usize::from(thickness[idx] >= ICE_COVER_THRESHOLD_M);
        }
        let open: Vec<bool> = n_valid.iter().map(|&n| n > 0).collect();
        let mut ice_bed: Vec<Option<f64>> = bed_sum
            .iter()
            .zip(&n_valid)
            .map(|(&s, &n)| (n > 0).then(|| s / n as f64))
            .collect();
        fill_from_neighbours(&mut ice_bed, ice_cols, ice_rows);
        let ice_bed: Vec<f64> = ice_bed.into_iter().map(|z| z.unwrap_or(0.0)).collect();
        let cells_per_block = (block * block) as f64;
        let ice_grid_thickness_m: Vec<f64> = ice_sum.iter().map(|&v| v / cells_per_block).collect();
        let mut stepper = SiaStepper::new(
            ice_cols,
            ice_rows,
            geometry.cell_size_m * block as f64,
            ice_bed,
            &open,
            scenario.flow.constants(),
        )?;

        let surface_m = Grid {
            geometry,
            values: bed_m
                .values
                .iter()
                .zip(&thickness)
                .map(|(&b, &h)| b + h)
                .collect(),
            nodata: bed_m.nodata.clone(),
            nodata_value: bed_m.nodata_value,
        };
        let domain: Vec<bool> = match (domain_grid, scenario.mass_balance.domain) {
            (Some(d), _) => d
                .values
                .iter()
                .zip(&d.nodata)
                .zip(&valid)
                .map(|((&v, &missing), &ok)| ok && !missing && v > 0.0)
                .collect(),
            (None, DomainRule::Drainage) => drainage_domain(&surface_m, &thickness),
            (None, DomainRule::WholeGrid) => valid.clone(),
        };
        let mut ice_domain = block_fractions(&domain, &valid, n_cols, n_rows, block);
        for (d, &o) in ice_domain.iter_mut().zip(&open) {
            if !o {
                *d = 0.0;
            }
        }
        stepper.set_domain(&ice_domain);

        let mb = &scenario.mass_balance;
        let density = scenario.flow.ice_density_kg_m3;
        let redistribution = mb.snow_redistribution.then(|| {
            SnowRedistribution::new(
                ice_cols,
                ice_rows,
                stepper.cell_size_m(),
                mb.snow_limit_slope_deg,
                mb.snow_holding_depth_mwe * WATER_DENSITY_KG_M3 / density,
            )
        });
        let climate = ClimateTrajectory::new(&scenario.climate, f64::from(scenario.start_year))?;
        let start_anomaly = climate.anomaly_c(f64::from(scenario.start_year));
        let mut simulation = IceSimulation {
            geometry,
            block,
            ice_cols,
            ice_rows,
            climate,
            mass_balance: mb.clone(),
            calibration: ElaCalibration {
                ela0_m: 0.0,
                start_ela_m: 0.0,
                method: ElaMethod::Fixed,
                mean_balance_mwe_per_a: None,
            },
            relaxation: RelaxationReport {
                years: 0,
                volume_before_km3: 0.0,
                volume_after_km3: 0.0,
            },
            ice_density_kg_m3: density,
            domain,
            domain_given: domain_grid.is_some(),
            redistribution,
            surface_scratch: Vec::with_capacity(n_ice),
            snowfall_scratch: vec![0.0; n_ice],
            kept_scratch: vec![0.0; n_ice],
            start_year: scenario.start_year,
            end_year: scenario.end_year(),
            year: scenario.start_year,
            ice_box: stepper.ice_box(&ice_grid_thickness_m),
            stepper,
            ice_grid_thickness_m,
            valid,
            ice_thickness_m: vec![0.0; n_cols * n_rows],
            exposure: ExposureTracker::new(&[]),
            summary: Vec::with_capacity(scenario.n_years as usize + 1),
            block_scratch: vec![0.0; 2 * block * block],
            fine_bed_m: bed_m
                .values
                .iter()
                .zip(&bed_m.nodata)
                .map(|(&z, &missing)| if missing { 0.0 } else { z })
                .collect(),
            block_valid: n_valid,
            edge_year: None,
            treeline_note: String::new(),
        };
        simulation.calibration = simulation.calibrate(
            &surface_m,
            &thickness,
            &glacier_cells,
            start_anomaly,
            domain_grid.is_some(),
        )?;
        if glacier_cells.iter().any(|&n| n > 0) {
            let start = simulation.ice_grid_thickness_m.clone();
            let ela = simulation.calibration.start_ela_m;
            simulation.calibration.mean_balance_mwe_per_a =
                Some(simulation.glacier_mean_balance_mwe(&start, &glacier_cells, ela));
        }
        simulation.relax(scenario.relaxation_years, start_anomaly);
        if simulation.touches_edge(simulation.ice_box) {
            simulation.edge_year = Some(simulation.start_year);
        }
        simulation.treeline_note = treeline_note(scenario, simulation.calibration.start_ela_m);
        // The fine layer is the downscaled ice grid from the start, so the first year's
        // changes are the model's, not the transfer's.
        if let Some(ice_box) = simulation.ice_box {
            simulation.downscale(ice_box);
        }
        simulation.exposure = ExposureTracker::new(&simulation.ice_thickness_m);
        let row = simulation.summarise(simulation.start_year, start_anomaly, 0, 0, 0);
        simulation.summary.push(row);
        Ok(simulation)
    }

    /// The ELA of the run: the scenario's, or calibrated on the starting glacier.
    fn calibrate(
        &mut self,
        surface_m: &Grid,
        thickness_m: &[f32],
        glacier_cells: &[usize],
        start_anomaly_c: f64,
        domain_given: bool,
    ) -> Result<ElaCalibration, SimulationError> {
        let mb = self.mass_balance.clone();
        let shift = mb.ela_sensitivity_m_per_k * start_anomaly_c;
        let done = |start_ela_m: f64, method: ElaMethod| ElaCalibration {
            ela0_m: start_ela_m - shift,
            start_ela_m,
            method,
            mean_balance_mwe_per_a: None,
        };
        if let Some(ela0) = mb.ela_m {
            return Ok(done(ela0 + shift, ElaMethod::Fixed));
        }
        let mut glacier_surfaces: Vec<f64> = surface_m
            .values
            .iter()
            .zip(thickness_m)
            .zip(&self.valid)
            .filter(|((_, &h), &ok)| ok && h >= ICE_COVER_THRESHOLD_M)
            .map(|((&z, _), _)| f64::from(z))
            .collect();
        if glacier_surfaces.is_empty() {
            if domain_given {
                return Err(CalibrationError::NothingToCalibrate.into());
            }
            let highest = surface_m.value_range().map_or(0.0, |(_, hi)| f64::from(hi));
            return Ok(done(highest, ElaMethod::NoGlacier));
        }
        if let Some(ratio) = mb.balanced_aar {
            let ela = aar_ela_m(&mut glacier_surfaces, ratio).unwrap_or(0.0);
            return Ok(done(ela, ElaMethod::AccumulationAreaRatio { ratio }));
        }
        let target = mb.calibration_target_mwe_per_a.unwrap_or(0.0);
        let (low, high) = glacier_surfaces
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &z| {
                (lo.min(z), hi.max(z))
            });
        let thickness = self.ice_grid_thickness_m.clone();
        let ela = ela_for_mean_balance(target, low - 3000.0, high + 3000.0, |ela| {
            self.glacier_mean_balance_mwe(&thickness, glacier_cells, ela)
        })?;
        Ok(done(
            ela,
            ElaMethod::MeanBalance {
                target_mwe_per_a: target,
            },
        ))
    }

    /// Glacier-wide mean balance of the ice-grid state `thickness_m` for the ELA `ela_m`, m
    /// water equivalent per year: the mass the glacier system gains over the glacier's area.
    /// Each block's glacier cells count its ablation plus the accumulation it keeps (after
    /// redistribution); its other valid cells count the accumulation alone, since snow that
    /// stays on ice-free ground of the domain becomes ice too (a geodetic rate measures it).
    pub(crate) fn glacier_mean_balance_mwe(
        &mut self,
        thickness_m: &[f64],
        glacier_cells: &[usize],
        ela_m: f64,
    ) -> f64 {
        let balance = self
            .mass_balance
            .profile_at_ela(ela_m, self.ice_density_kg_m3);
        self.accumulation_field(thickness_m, &balance);
        let (mut sum, mut weight) = (0.0, 0.0);
        for (i, (&n, &n_valid)) in glacier_cells.iter().zip(&self.block_valid).enumerate() {
            let s = self.surface_scratch[i];
            let accumulation = match self.redistribution {
                Some(_) => self.kept_scratch[i],
                None => positive_part(balance.rate_m_per_a(s)) * self.stepper.domain()[i],
            };
            sum += n as f64 * balance.ablation_m_per_a(s) + n_valid as f64 * accumulation;
            weight += n as f64;
        }
        sum / weight * self.ice_density_kg_m3 / WATER_DENSITY_KG_M3
    }

    /// Fills the surface scratch from `thickness_m` and, with redistribution, the snow each
    /// ice cell keeps this year (`kept_scratch`, m ice per year).
    fn accumulation_field(&mut self, thickness_m: &[f64], balance: &LinearBalance) {
        self.stepper
            .surface_of(thickness_m, &mut self.surface_scratch);
        if let Some(redistribution) = &mut self.redistribution {
            let domain = self.stepper.domain();
            for ((snow, &s), &d) in self
                .snowfall_scratch
                .iter_mut()
                .zip(&self.surface_scratch)
                .zip(domain)
            {
                *snow = positive_part(balance.rate_m_per_a(s)) * d;
            }
            redistribution.redistribute(
                &self.surface_scratch,
                domain,
                &self.snowfall_scratch,
                &mut self.kept_scratch,
            );
        }
    }

    /// One year of flow and balance on the ice grid.
    fn advance_year(&mut self, balance: &LinearBalance) -> AdvanceReport {
        if self.redistribution.is_some() {
            let thickness = std::mem::take(&mut self.ice_grid_thickness_m);
            self.accumulation_field(&thickness, balance);
            self.ice_grid_thickness_m = thickness;
            self.stepper.advance_with(
                &mut self.ice_grid_thickness_m,
                1.0,
                balance,
                Some(&self.kept_scratch),
            )
        } else {
            self.stepper
                .advance(&mut self.ice_grid_thickness_m, 1.0, balance)
        }
    }

    /// Relaxes the ice for `years` at the start year's climate.
    fn relax(&mut self, years: u32, start_anomaly_c: f64) {
        let before = self.ice_volume_m3();
        let balance = self.balance_for(start_anomaly_c);
        for _ in 0..years {
            if self.ice_box.is_none() {
                break;
            }
            self.advance_year(&balance);
            self.ice_box = self.stepper.ice_box(&self.ice_grid_thickness_m);
        }
        self.relaxation = RelaxationReport {
            years,
            volume_before_km3: before / 1e9,
            volume_after_km3: self.ice_volume_m3() / 1e9,
        };
    }

    /// The balance profile for an anomaly, about the run's ELA.
    fn balance_for(&self, anomaly_c: f64) -> LinearBalance {
        let ela = self
            .mass_balance
            .ela_for_anomaly_m(self.calibration.ela0_m, anomaly_c);
        self.mass_balance
            .profile_at_ela(ela, self.ice_density_kg_m3)
    }

    /// Simulates the next year; `None` once the scenario's years are done. Allocates
    /// nothing; the caller may stop between years (progress and cancel).
    pub fn step_year(&mut self) -> Option<YearSummary> {
        if self.year >= self.end_year {
            return None;
        }
        let year = self.year + 1;
        let anomaly = self.climate.anomaly_c(f64::from(year));
        let balance = self.balance_for(anomaly);
        let report = self.advance_year(&balance);
        let new_box = self.stepper.ice_box(&self.ice_grid_thickness_m);
        let changed = match (self.ice_box, new_box) {
            (Some(a), Some(b)) => Some(union(a, b)),
            (a, b) => a.or(b),
        };
        let mut newly_exposed = 0;
        if let Some(changed) = changed {
            self.downscale(changed);
            let n_cols = self.geometry.n_cols;
            let first_row = changed.row_min * self.block;
            let last_row = ((changed.row_max + 1) * self.block).min(self.geometry.n_rows);
            newly_exposed = self.exposure.update(
                &self.ice_thickness_m,
                year,
                first_row * n_cols..last_row * n_cols,
            );
        }
        self.ice_box = new_box;
        if self.edge_year.is_none() && self.touches_edge(new_box) {
            self.edge_year = Some(year);
        }
        self.year = year;
        let row = self.summarise(
            year,
            anomaly,
            newly_exposed,
            report.substeps,
            report.cell_updates,
        );
        self.summary.push(row);
        Some(row)
    }

    /// Spreads each ice-grid block's volume over its valid input cells as the bilinear
    /// ice-grid surface less the fine bed, floored at zero, with the surface raised or lowered
    /// by one amount per block so the block keeps exactly its volume. A margin on a valley wall
    /// then falls where the surface meets the fine ground, not a block off.
    fn downscale(&mut self, ice_box: CellBox) {
        let (n_cols, n_rows) = (self.geometry.n_cols, self.geometry.n_rows);
        let k = self.block;
        let (ice_cols, ice_rows) = (self.ice_cols, self.ice_rows);
        let ice = &self.ice_grid_thickness_m;
        let ice_bed = self.stepper.bed_m();
        let scratch = &mut self.block_scratch;
        for ice_row in ice_box.row_min..=ice_box.row_max {
            let rows = ice_row * k..((ice_row + 1) * k).min(n_rows);
            for ice_col in ice_box.col_min..=ice_box.col_max {
                let cols = ice_col * k..((ice_col + 1) * k).min(n_cols);
                let block_volume = ice[ice_row * ice_cols + ice_col] * (k * k) as f64;
                if block_volume <= 0.0 {
                    for row in rows.clone() {
                        self.ice_thickness_m[row * n_cols + cols.start..row * n_cols + cols.end]
                            .fill(0.0);
                    }
                    continue;
                }
                let near = neighbour_surfaces(ice, ice_bed, ice_cols, ice_rows, ice_row, ice_col);
                // Interpolated surface less fine bed in the first k*k slots; the valid ones,
                // sorted, in the rest.
                let (above_bed, sorted) = scratch.split_at_mut(k * k);
                let mut n_valid = 0usize;
                for (i, row) in rows.clone().enumerate() {
                    // Offset of the fine centre from the block centre, in ice cells.
                    let fy = (i as f64 + 0.5) / k as f64 - 0.5;
                    let (r_other, wy) = if fy < 0.0 { (0, -fy) } else { (2, fy) };
                    for (j, col) in cols.clone().enumerate() {
                        let idx = row * n_cols + col;
                        if !self.valid[idx] {
                            above_bed[i * k + j] = f64::NEG_INFINITY;
                            continue;
                        }
                        let fx = (j as f64 + 0.5) / k as f64 - 0.5;
                        let (c_other, wx) = if fx < 0.0 { (0, -fx) } else { (2, fx) };
                        let surface = near[1][1] * (1.0 - wx) * (1.0 - wy)
                            + near[1][c_other] * wx * (1.0 - wy)
                            + near[r_other][1] * (1.0 - wx) * wy
                            + near[r_other][c_other] * wx * wy;
                        let d = surface - f64::from(self.fine_bed_m[idx]);
                        above_bed[i * k + j] = d;
                        sorted[n_valid] = d;
                        n_valid += 1;
                    }
                }
                let shift = volume_keeping_shift(&mut sorted[..n_valid], block_volume);
                for (i, row) in rows.clone().enumerate() {
                    for (j, col) in cols.clone().enumerate() {
                        let idx = row * n_cols + col;
                        let h = positive_part(above_bed[i * k + j] + shift);
                        self.ice_thickness_m[idx] = if self.valid[idx] { h as f32 } else { 0.0 };
                    }
                }
            }
        }
    }

    fn summarise(
        &self,
        year: i32,
        anomaly_c: f64,
        newly_exposed: usize,
        substeps: u32,
        cell_updates: u64,
    ) -> YearSummary {
        let (mut n_ice, mut max_h) = (0usize, 0.0_f32);
        if let Some(b) = self.ice_box {
            let n_cols = self.geometry.n_cols;
            let first = b.row_min * self.block * n_cols;
            let last = ((b.row_max + 1) * self.block).min(self.geometry.n_rows) * n_cols;
            for &h in &self.ice_thickness_m[first..last] {
                n_ice += usize::from(h >= ICE_COVER_THRESHOLD_M);
                max_h = max_h.max(h);
            }
        }
        let cell_km2 = self.geometry.cell_area_m2() / 1e6;
        YearSummary {
            year,
            temperature_anomaly_c: anomaly_c,
            ela_m: self
                .mass_balance
                .ela_for_anomaly_m(self.calibration.ela0_m, anomaly_c),
            ice_area_km2: n_ice as f64 * cell_km2,
            ice_volume_km3: self.ice_volume_m3() / 1e9,
            newly_exposed_area_km2: newly_exposed as f64 * cell_km2,
            max_thickness_m: f64::from(max_h),
            substeps,
            cell_updates,
        }
    }

    /// Ice volume on the ice grid, m^3 (exact, `f64`).
    pub fn ice_volume_m3(&self) -> f64 {
        self.stepper.volume_m3(&self.ice_grid_thickness_m)
    }

    /// How the run's ELA was set.
    pub fn calibration(&self) -> &ElaCalibration {
        &self.calibration
    }

    /// What the start-up relaxation did.
    pub fn relaxation(&self) -> &RelaxationReport {
        &self.relaxation
    }

    /// Whether ice lies in an ice-grid cell on the grid's edge.
    fn touches_edge(&self, ice_box: Option<CellBox>) -> bool {
        ice_box.is_some_and(|b| {
            b.row_min == 0
                || b.col_min == 0
                || b.row_max + 1 == self.ice_rows
                || b.col_max + 1 == self.ice_cols
        })
    }

    /// Warnings the run so far calls for: ice at the grid edge, which is closed to flow.
    pub fn end_notes(&self) -> Vec<String> {
        self.edge_year
            .map(|year| {
                format!(
                    "warning: ice reached the edge of the grid in {year}; the edge is closed to \
                     ice flow, so ice piles against it there; extend the terrain beyond the \
                     glacier"
                )
            })
            .into_iter()
            .collect()
    }

    /// One line per start-up step: the ELA and how it was set, the relaxation, the domain.
    pub fn start_notes(&self) -> Vec<String> {
        let n_domain = self.domain.iter().filter(|&&d| d).count();
        vec![
            self.calibration.describe(),
            self.relaxation.describe(),
            format!(
                "glacier domain {:.3} km² ({})",
                n_domain as f64 * self.geometry.cell_area_m2() / 1e6,
                match (self.domain_given, self.mass_balance.domain) {
                    (true, _) => "given",
                    (false, DomainRule::Drainage) => {
                        "starting ice, the ground touching it and the ground draining into them"
                    }
                    (false, DomainRule::WholeGrid) => "the whole grid",
                }
            ),
            self.treeline_note.clone(),
        ]
    }

    /// Input cells where the balance may add ice (the glacier domain).
    pub fn domain(&self) -> &[bool] {
        &self.domain
    }

    /// Summary rows so far: the start state, then one per simulated year.
    pub fn summary(&self) -> &[YearSummary] {
        &self.summary
    }

    /// Ice thickness on the input grid at the end of [`IceSimulation::year`], m.
    pub fn ice_thickness_m(&self) -> &[f32] {
        &self.ice_thickness_m
    }

    /// Exposure year per input cell (see `exposure` for the two markers).
    pub fn year_exposed(&self) -> &[i32] {
        self.exposure.year_exposed()
    }

    /// Times each input cell was covered again by ice after being ice-free.
    pub fn reglaciations(&self) -> &[u8] {
        self.exposure.reglaciations()
    }

    /// The year whose end state is held.
    pub fn year(&self) -> i32 {
        self.year
    }

    pub fn start_year(&self) -> i32 {
        self.start_year
    }

    pub fn end_year(&self) -> i32 {
        self.end_year
    }

    pub fn is_finished(&self) -> bool {
        self.year >= self.end_year
    }

    pub fn geometry(&self) -> &GridGeometry {
        &self.geometry
    }

    /// Input cells per ice-grid cell along each axis.
    pub fn ice_grid_block(&self) -> usize {
        self.block
    }

    /// Ice-grid size (columns, rows) and cell size, m.
    pub fn ice_grid_shape(&self) -> (usize, usize, f64) {
        (self.ice_cols, self.ice_rows, self.stepper.cell_size_m())
    }

    /// Ice thickness on the ice grid, m.
    pub fn ice_grid_thickness_m(&self) -> &[f64] {
        &self.ice_grid_thickness_m
    }
}

/// The growing-season air temperature at the start year's ELA and where the scenario's
/// treeline lies (the lowest growing-season minimum of its tree types; the default 6.7 C of
/// Körner & Paulsen 2004, J. Biogeogr. 31:713-732, is a seasonal mean root-zone temperature,
/// applied here to air temperature). A treeline above the ELA (trees on ground where snow
/// builds glaciers) means the growing season and the mass balance disagree.
fn treeline_note(scenario: &Scenario, start_ela_m: f64) -> String {
    let season = &scenario.vegetation.growing_season;
    let lapse_k_per_m = season.lapse_rate_k_per_km / 1000.0;
    let at_ela_c = season.sea_level_temp_c - lapse_k_per_m * start_ela_m;
    let tree_limit_c = scenario
        .vegetation
        .types
        .iter()
        .filter(|t| t.growth_form == crate::plants::pft::GrowthForm::Tree)
        .map(|t| t.min_growing_season_temp_c)
        .fold(f64::INFINITY, f64::min);
    let tree_limit_c = if tree_limit_c.is_finite() {
        tree_limit_c
    } else {
        TREELINE_TEMP_C
    };
    let treeline_m = (season.sea_level_temp_c - tree_limit_c) / lapse_k_per_m;
    let verdict = if treeline_m > start_ela_m {
        "warning: the treeline lies above the ELA; check the growing season against the mass \
         balance"
    } else {
        "the treeline lies below the ELA"
    };
    format!(
        "growing-season mean {at_ela_c:.1} °C at the ELA; the {tree_limit_c} °C treeline \
         (a root-zone temperature, here applied to air) at {treeline_m:.0} m: {verdict}"
    )
}

/// Seasonal mean root-zone temperature at climatic treelines, C (Körner & Paulsen 2004), for a
/// scenario without tree types.
const TREELINE_TEMP_C: f64 = 6.7;

/// The ice surface on the 3 x 3 ice cells around an ice-covered one, for interpolation. An
/// ice-free neighbour's ground is not the ice surface's continuation: its value is carried on
/// from the opposite side (or held level when both sides are ice-free), so a planar surface
/// stays planar up to the margin; beyond the grid edge the cell's own value holds.
fn neighbour_surfaces(
    thickness: &[f64],
    bed: &[f64],
    n_cols: usize,
    n_rows: usize,
    row: usize,
    col: usize,
) -> [[f64; 3]; 3] {
    let rows = [row.saturating_sub(1), row, (row + 1).min(n_rows - 1)];
    let cols = [col.saturating_sub(1), col, (col + 1).min(n_cols - 1)];
    let at = |i: usize, j: usize| {
        let idx = rows[i] * n_cols + cols[j];
        (thickness[idx] > 0.0).then(|| bed[idx] + thickness[idx])
    };
    let centre = bed[row * n_cols + col] + thickness[row * n_cols + col];
    let along = |a: Option<f64>, opposite: Option<f64>| {
        a.unwrap_or_else(|| opposite.map_or(centre, |o| 2.0 * centre - o))
    };
    let (north, south) = (at(0, 1), at(2, 1));
    let (west, east) = (at(1, 0), at(1, 2));
    let mut s = [[centre; 3]; 3];
    s[0][1] = along(north, south);
    s[2][1] = along(south, north);
    s[1][0] = along(west, east);
    s[1][2] = along(east, west);
    for i in [0, 2] {
        for j in [0, 2] {
            s[i][j] = at(i, j).unwrap_or(s[i][1] + s[1][j] - centre);
        }
    }
    s
}

/// The amount c for which the sum of max(0, d + c) over `d` equals `volume` (> 0), in units
/// of one cell: the level a block's surface must move to hold its volume. Sorts `d`.
fn volume_keeping_shift(d: &mut [f64], volume: f64) -> f64 {
    // Inside the ice every cell stays wet and no sort is needed.
    let (sum, min) = d
        .iter()
        .fold((0.0, f64::INFINITY), |(s, m), &x| (s + x, m.min(x)));
    let all_wet = (volume - sum) / d.len() as f64;
    if min + all_wet > 0.0 {
        return all_wet;
    }
    d.sort_unstable_by(|a, b| b.total_cmp(a));
    let mut top_sum = 0.0;
    for j in 0..d.len() {
        top_sum += d[j];
        let shift = (volume - top_sum) / (j + 1) as f64;
        if d.get(j + 1).is_none_or(|&next| next + shift <= 0.0) {
            return shift;
        }
    }
    0.0
}

fn union(a: CellBox, b: CellBox) -> CellBox {
    CellBox {
        row_min: a.row_min.min(b.row_min),
        row_max: a.row_max.max(b.row_max),
        col_min: a.col_min.min(b.col_min),
        col_max: a.col_max.max(b.col_max),
    }
}

/// Fills missing values with the mean of their filled 4-neighbours, sweeping until none
/// is left (the grid holds at least one value).
fn fill_from_neighbours(values: &mut [Option<f64>], n_cols: usize, n_rows: usize) {
    let mut missing: Vec<usize> = (0..values.len()).filter(|&i| values[i].is_none()).collect();
    while !missing.is_empty() {
        let before = missing.len();
        let mut filled = Vec::new();
        missing.retain(|&idx| {
            let (row, col) = (idx / n_cols, idx % n_cols);
            let mut sum = 0.0;
            let mut n = 0;
            let neighbours = [
                (row > 0).then(|| idx - n_cols),
                (row + 1 < n_rows).then(|| idx + n_cols),
                (col > 0).then(|| idx - 1),
                (col + 1 < n_cols).then(|| idx + 1),
            ];
            for j in neighbours.into_iter().flatten() {
                if let Some(z) = values[j] {
                    sum += z;
                    n += 1;
                }
            }
            if n > 0 {
                filled.push((idx, sum / n as f64));
                false
            } else {
                true
            }
        });
        for (idx, z) in filled {
            values[idx] = Some(z);
        }
        if missing.len() == before {
            break;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn geometry(n: usize, cell: f64) -> GridGeometry {
        GridGeometry {
            n_cols: n,
            n_rows: n,
            cell_size_m: cell,
            west_m: 0.0,
            north_m: 0.0,
            epsg: Some(32632),
        }
    }

    #[test]
    fn transfer_to_the_ice_grid_and_back_keeps_volume() {
        let g = geometry(22, 25.0);
        let bed = Grid::from_values(g, (0..22 * 22).map(|i| 2000.0 + (i % 22) as f32).collect());
        let thickness = Grid::from_values(
            g,
            (0..22 * 22)
                .map(|i| if (i / 22) % 7 > 2 { 30.0 } else { 0.0 })
                .collect(),
        );
        let scenario = Scenario {
            n_years: 2,
            relaxation_years: 0,
            ..Scenario::default()
        };
        let simulation = IceSimulation::new(&bed, &thickness, &scenario).expect("valid");
        assert_eq!(simulation.ice_grid_block(), 4);
        let fine_volume: f64 = simulation
            .ice_thickness_m()
            .iter()
            .map(|&h| f64::from(h))
            .sum::<f64>()
            * 625.0;
        let input_volume: f64 = thickness.values.iter().map(|&h| f64::from(h)).sum::<f64>() * 625.0;
        assert!((fine_volume / input_volume - 1.0).abs() < 1e-6);
        assert!((simulation.ice_volume_m3() / input_volume - 1.0).abs() < 1e-12);
    }

    #[test]
    fn ice_at_the_grid_edge_is_warned_about_and_inland_ice_is_not() {
        let g = geometry(12, 100.0);
        let bed = Grid::filled(g, 2000.0);
        let scenario = Scenario {
            n_years: 2,
            ..Scenario::default()
        };
        let everywhere = Grid::filled(g, 50.0);
        let run = IceSimulation::new(&bed, &everywhere, &scenario).expect("valid");
        assert!(
            run.end_notes()[0].contains("edge of the grid in 2025"),
            "{:?}",
            run.end_notes()
        );
        let mut inland = Grid::filled(g, 0.0);
        for row in 5..7 {
            for col in 5..7 {
                inland.values[row * 12 + col] = 20.0;
            }
        }
        let mut run = IceSimulation::new(&bed, &inland, &scenario).expect("valid");
        while run.step_year().is_some() {}
        assert!(run.end_notes().is_empty(), "{:?}", run.end_notes());
    }

    #[test]
    fn bad_thickness_names_the_cell() {
        let g = geometry(5, 100.0);
        let bed = Grid::filled(g, 2000.0);
        let mut thickness = Grid::filled(g, 0.0);
        thickness.values[7] = -3.0;
        let err = IceSimulation::new(&bed, &thickness, &Scenario::default()).unwrap_err();
        assert!(err.to_string().contains("row 1, column 2"), "{err}");
    }

    #[test]
    fn run_ends_after_n_years() {
        let g = geometry(6, 100.0);
        let bed = Grid::filled(g, 2000.0);
        let thickness = Grid::filled(g, 10.0);
        let scenario = Scenario {
            n_years: 3,
            ..Scenario::default()
        };
        let mut simulation = IceSimulation::new(&bed, &thickness, &scenario).expect("valid");
        let years: Vec<i32> = std::iter::from_fn(|| simulation.step_year())
            .map(|r| r.year)
            .collect();
        assert_eq!(years, vec![2026, 2027, 2028]);
        assert_eq!(simulation.summary().len(), 4);
        assert!(simulation.is_finished());
    }
}
