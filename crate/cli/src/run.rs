//! `forefield run SCENARIO.json [--out DIR]`: runs the ice model of a scenario file and writes
//! the yearly summary (CSV), ice thickness for the requested years and the exposure years
//! (GeoTIFF). Grid file names in the scenario are relative to the scenario file.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use anyhow::{bail, Context, Result};
use forefield_engine::exposure::{ICE_FREE_AT_START, STILL_ICE_COVERED};
use forefield_engine::geotiff::{read_geotiff, write_geotiff};
use forefield_engine::grid::Grid;
use forefield_engine::ice_outline::thickness_from_outline;
use forefield_engine::outline::outline_mask;
use forefield_engine::scenario::Scenario;
use forefield_engine::simulation::{bed_from_surface, IceSimulation, YearSummary};

/// Value written to `year_exposed.tif` for cells ice-free since before the start.
pub const EXPOSED_BEFORE_START_VALUE: f32 = -1.0;

/// Nodata marker of the written GeoTIFFs.
const NODATA_VALUE: f64 = -9999.0;

const CAUTION: &str = "Outputs are planning-level scenarios, not hazard assessments or \
forecasts; consult local authorities and qualified professionals about lakes, slopes and siting.";

/// Entry point of the `run` subcommand; `args` are the words after `run`.
pub fn run(args: &[String]) -> Result<()> {
    let mut scenario_path: Option<PathBuf> = None;
    let mut out_dir = PathBuf::from("out");
    let mut words = args.iter();
    while let Some(word) = words.next() {
        match word.as_str() {
            "--out" => match words.next() {
                Some(dir) => out_dir = PathBuf::from(dir),
                None => bail!("--out needs a folder"),
            },
            flag if flag.starts_with("--") => bail!("run: unknown option {flag:?}"),
            path if scenario_path.is_none() => scenario_path = Some(PathBuf::from(path)),
            extra => bail!("run: unexpected argument {extra:?}"),
        }
    }
    let Some(scenario_path) = scenario_path else {
        bail!("run needs a scenario file: forefield run SCENARIO.json --out DIR")
    };
    let text = std::fs::read_to_string(&scenario_path)
        .with_context(|| format!("reading {}", scenario_path.display()))?;
    let scenario = Scenario::from_json(&text)
        .with_context(|| format!("scenario {}", scenario_path.display()))?;
    let base = scenario_path.parent().unwrap_or(Path::new("."));
    let (bed, thickness) = load_ice_inputs(&scenario, base)?;

    let mut simulation = IceSimulation::new(&bed, &thickness, &scenario)
        .with_context(|| format!("scenario {}", scenario_path.display()))?;
    std::fs::create_dir_all(&out_dir).with_context(|| format!("creating {}", out_dir.display()))?;
    let (ice_cols, ice_rows, ice_cell_m) = simulation.ice_grid_shape();
    println!(
        "{}: {} years from {} on {} x {} cells; ice grid {} x {} cells of {} m",
        scenario.name,
        scenario.n_years,
        scenario.start_year,
        bed.n_cols(),
        bed.n_rows(),
        ice_cols,
        ice_rows,
        ice_cell_m
    );
    if scenario.output_years.contains(&simulation.year()) {
        write_thickness(&out_dir, &bed, &simulation)?;
    }
    let step = (scenario.n_years / 10).max(1) as i32;
    while let Some(row) = simulation.step_year() {
        if scenario.output_years.contains(&row.year) {
            write_thickness(&out_dir, &bed, &simulation)?;
        }
        if (row.year - scenario.start_year) % step == 0 {
            println!(
                "year {}: dT {:+.2} C, ELA {:.0} m, ice {:.3} km2, {:.4} km3",
                row.year,
                row.temperature_anomaly_c,
                row.ela_m,
                row.ice_area_km2,
                row.ice_volume_km3
            );
        }
    }
    write_file(
        &out_dir.join("summary.csv"),
        summary_csv(simulation.summary()).into_bytes(),
    )?;
    write_file(
        &out_dir.join("year_exposed.tif"),
        write_geotiff(&exposure_grid(&bed, &simulation)),
    )?;
    write_file(
        &out_dir.join("scenario.json"),
        scenario.to_json().into_bytes(),
    )?;
    println!("{CAUTION}");
    Ok(())
}

fn read_grid(base: &Path, name: &Option<String>) -> Result<Option<Grid>> {
    let Some(name) = name else { return Ok(None) };
    let path = base.join(name);
    let bytes = std::fs::read(&path).with_context(|| format!("reading {}", path.display()))?;
    Ok(Some(read_geotiff(&bytes, name)?))
}

/// Bed and initial thickness from whichever grids the scenario names.
fn load_ice_inputs(scenario: &Scenario, base: &Path) -> Result<(Grid, Grid)> {
    let grids = &scenario.grids;
    let surface = read_grid(base, &grids.surface_elevation)?;
    let bed = read_grid(base, &grids.bed_elevation)?;
    let thickness = read_grid(base, &grids.ice_thickness)?;
    // A glacier outline is a GeoTIFF mask or a GeoJSON polygon file.
    let outline_text = match grids.glacier_mask.as_deref() {
        Some(name) if is_geojson(name) => {
            let path = base.join(name);
            Some(
                std::fs::read_to_string(&path)
                    .with_context(|| format!("reading {}", path.display()))?,
            )
        }
        _ => None,
    };
    let mask = match outline_text {
        Some(_) => None,
        None => read_grid(base, &grids.glacier_mask)?,
    };
    let zero_like = |grid: &Grid| Grid::filled(grid.geometry, 0.0);
    Ok(match (surface, bed, thickness, mask) {
        (_, Some(bed), Some(thickness), None) => (bed, thickness),
        (Some(surface), None, Some(thickness), None) => {
            (bed_from_surface(&surface, &thickness)?, thickness)
        }
        (Some(surface), None, None, mask) if mask.is_some() || outline_text.is_some() => {
            let name = grids.glacier_mask.as_deref().unwrap_or_default();
            let inside: Vec<bool> = match (mask, &outline_text) {
                (_, Some(text)) => outline_mask(text, name, &surface.geometry)?,
                (Some(mask), None) => {
                    if !surface.geometry.aligns_with(&mask.geometry) {
                        bail!("{name}: glacier mask does not line up with the surface grid");
                    }
                    mask.values
                        .iter()
                        .zip(&mask.nodata)
                        .map(|(&v, &missing)| !missing && v > 0.0)
                        .collect()
                }
                (None, None) => bail!("{name}: no glacier outline was read"),
            };
            let estimate = thickness_from_outline(
                &surface,
                &inside,
                &scenario.outline,
                scenario.flow.ice_density_kg_m3,
            )
            .with_context(|| format!("estimating thickness inside {name}"))?;
            println!(
                "thickness from the glacier mask: area {:.3} km2, volume {:.4} km3 \
                 (volume-area scaling: {:.4} km3)",
                estimate.area_m2 / 1e6,
                estimate.volume_m3 / 1e9,
                estimate.scaling_volume_m3 / 1e9
            );
            let thickness = estimate.ice_thickness_m;
            (bed_from_surface(&surface, &thickness)?, thickness)
        }
        (None, Some(bed), None, None) => {
            let thickness = zero_like(&bed);
            (bed, thickness)
        }
        (Some(surface), None, None, None) => {
            let thickness = zero_like(&surface);
            (surface, thickness)
        }
        // Scenario validation refuses every other combination.
        _ => bail!("the scenario's grids are not a usable combination"),
    })
}

/// Outline files are told apart from GeoTIFF masks by their extension.
fn is_geojson(name: &str) -> bool {
    let lower = name.to_ascii_lowercase();
    lower.ends_with(".geojson") || lower.ends_with(".json")
}

fn write_file(path: &Path, bytes: Vec<u8>) -> Result<()> {
    std::fs::write(path, bytes).with_context(|| format!("writing {}", path.display()))?;
    println!("wrote {}", path.display());
    Ok(())
}

fn write_thickness(out_dir: &Path, bed: &Grid, simulation: &IceSimulation) -> Result<()> {
    let mut grid = layer_like(bed);
    for ((value, &h), &missing) in grid
        .values
        .iter_mut()
        .zip(simulation.ice_thickness_m())
        .zip(&bed.nodata)
    {
        *value = if missing { f32::NAN } else { h };
    }
    let name = format!("ice_thickness_{}.tif", simulation.year());
    write_file(&out_dir.join(name), write_geotiff(&grid))
}

/// Exposure years as a float layer: the year, -1 for ice-free since before the start,
/// nodata under ice or where the bed has no data.
fn exposure_grid(bed: &Grid, simulation: &IceSimulation) -> Grid {
    let mut grid = layer_like(bed);
    for (idx, &year) in simulation.year_exposed().iter().enumerate() {
        let missing = bed.nodata[idx] || year == STILL_ICE_COVERED;
        grid.nodata[idx] = missing;
        grid.values[idx] = match year {
            _ if missing => f32::NAN,
            ICE_FREE_AT_START => EXPOSED_BEFORE_START_VALUE,
            year => year as f32,
        };
    }
    grid
}

fn layer_like(bed: &Grid) -> Grid {
    let mut grid = Grid::filled(bed.geometry, 0.0);
    grid.nodata.clone_from(&bed.nodata);
    grid.nodata_value = Some(NODATA_VALUE);
    grid
}

/// The yearly summary as RFC 4180 CSV with units in the column names.
pub fn summary_csv(rows: &[YearSummary]) -> String {
    let mut csv = String::from(
        "year,temperature_anomaly_c,ela_m,ice_area_km2,ice_volume_km3,newly_exposed_area_km2,\
         max_thickness_m,flow_substeps\r\n",
    );
    for r in rows {
        // Writing to a String cannot fail.
        let _ = write!(
            csv,
            "{},{:.4},{:.2},{:.6},{:.8},{:.6},{:.2},{}\r\n",
            r.year,
            r.temperature_anomaly_c,
            r.ela_m,
            r.ice_area_km2,
            r.ice_volume_km3,
            r.newly_exposed_area_km2,
            r.max_thickness_m,
            r.substeps
        );
    }
    csv
}
