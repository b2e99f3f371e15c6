//! `forefield run SCENARIO.json`: runs the coupled ice and plant model of a scenario file
//! through the engine's recorded run (as the page's worker does) and writes the yearly
//! summary (CSV), the timeline, the terrain it ran on, ice thickness for the scenario's output
//! years and the last year's exposure years (GeoTIFF), and the exports asked for. Grid file
//! names in the scenario are relative to the scenario file.

use std::path::Path;

use anyhow::{bail, Context, Result};
use forefield_engine::base::grid::Grid;
use forefield_engine::export::csv_tables::summary_csv;
use forefield_engine::export::layer_geotiff::layer_geotiff;
use forefield_engine::export::{ExportMeta, CAUTION};
use forefield_engine::ice::outline_thickness::thickness_from_outline;
use forefield_engine::io::geotiff::{read_geotiff, write_geotiff, ReadOptions};
use forefield_engine::io::outline::outline_mask;
use forefield_engine::run::inputs::{fit_domain, fit_vegetation, read_run_inputs, IceInput};
use forefield_engine::run::recorded::RecordedRun;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::simulation::{bed_from_surface, IceSimulation};
use forefield_engine::view::layers::LayerKind;

use crate::args::RunArgs;
use crate::exports::{write_exports, write_file};

/// The last year's exposure years, as `layer_exposure_year_<last year>.tif`.
pub const EXPOSURE_YEAR_FILE: &str = "exposure_year.tif";

/// Nodata marker of the written GeoTIFFs.
const NODATA_VALUE: f64 = -9999.0;

/// Files of a run folder that `forefield export` reads back.
pub const TIMELINE_FILE: &str = "timeline.fftl";
pub const TERRAIN_FILE: &str = "terrain.tif";
pub const SCENARIO_FILE: &str = "scenario.json";

/// Entry point of the `run` subcommand.
pub fn run(args: RunArgs) -> Result<()> {
    let RunArgs {
        scenario: scenario_path,
        out: out_dir,
        vegetation,
        ice_only,
        cell_size: cell_size_m,
        export: request,
    } = args;
    let text = std::fs::read_to_string(&scenario_path)
        .with_context(|| format!("reading {}", scenario_path.display()))?;
    let scenario = Scenario::from_json(&text)
        .with_context(|| format!("scenario {}", scenario_path.display()))?;
    let base = scenario_path.parent().unwrap_or(Path::new("."));
    let IceInputs {
        terrain,
        bed,
        thickness,
        stages,
    } = load_inputs(&scenario, base, vegetation.as_deref(), cell_size_m)?;
    let domain = match scenario.grids.glacier_domain.as_deref() {
        Some(name) => {
            let (grid, note) = fit_domain(&terrain.geometry, &read_bytes(&base.join(name))?, name)?;
            if let Some(note) = note {
                outln!("{note}");
            }
            Some(grid)
        }
        None => None,
    };
    let mut run = if ice_only {
        RecordedRun::ice_only(&bed, &thickness, domain.as_ref(), &scenario)
    } else {
        // Disturbance polygons named in the scenario lie beside it, like its grids.
        RecordedRun::with_plants(
            &bed,
            &thickness,
            domain.as_ref(),
            &scenario,
            stages.as_ref(),
            |name| std::fs::read(base.join(name)).map_err(|e| e.to_string()),
        )
    }
    .with_context(|| format!("scenario {}", scenario_path.display()))?;
    std::fs::create_dir_all(&out_dir).with_context(|| format!("creating {}", out_dir.display()))?;
    let (ice_cols, ice_rows, ice_cell_m) = run.ice().ice_grid_shape();
    outln!(
        "{}: {} years from {} on {} x {} cells; ice grid {} x {} cells of {} m; {}",
        scenario.name,
        scenario.n_years,
        scenario.start_year,
        bed.n_cols(),
        bed.n_rows(),
        ice_cols,
        ice_rows,
        ice_cell_m,
        if run.has_plants() {
            "ice and plants"
        } else {
            "ice only"
        }
    );
    for note in run.ice().start_notes() {
        outln!("{note}");
    }
    if scenario.output_years.contains(&run.year()) {
        write_thickness(&out_dir, &bed, run.ice())?;
    }
    let step = (scenario.n_years / 10).max(1) as i32;
    while let Some(row) = run.step_year() {
        let year = row.ice.year;
        if scenario.output_years.contains(&year) {
            write_thickness(&out_dir, &bed, run.ice())?;
        }
        if (year - scenario.start_year) % step == 0 {
            let r = &row.ice;
            let mut line = format!(
                "year {}: dT {:+.2} C, ELA {:.0} m, ice {:.3} km2, {:.4} km3",
                r.year, r.temperature_anomaly_c, r.ela_m, r.ice_area_km2, r.ice_volume_km3
            );
            if let Some(v) = &row.vegetation {
                let colonised: f64 = v.stage_area_km2[2..].iter().sum();
                line.push_str(&format!(", plants on {colonised:.3} km2"));
            }
            outln!("{line}");
        }
    }
    for note in run.ice().end_notes() {
        outln!("{note}");
    }
    let timeline = run.finish()?;
    let meta = ExportMeta::for_run(&scenario, &timeline);
    write_file(
        &out_dir.join("summary.csv"),
        summary_csv(run.rows(), timeline.type_names(), &meta).as_bytes(),
    )?;
    write_file(&out_dir.join(TIMELINE_FILE), &timeline.to_bytes())?;
    write_file(&out_dir.join(TERRAIN_FILE), &write_geotiff(&terrain))?;
    // The exposure-year layer of the last year, coded as every other exposure-year file.
    write_file(
        &out_dir.join(EXPOSURE_YEAR_FILE),
        &layer_geotiff(
            &timeline,
            &terrain,
            &meta,
            LayerKind::ExposureYear,
            timeline.last_year(),
        )?,
    )?;
    write_file(&out_dir.join(SCENARIO_FILE), scenario.to_json().as_bytes())?;
    write_exports(&out_dir, &timeline, &terrain, &meta, &request)?;
    outln!("{CAUTION}");
    Ok(())
}

fn read_grid(base: &Path, name: &Option<String>) -> Result<Option<Grid>> {
    let Some(name) = name else { return Ok(None) };
    let path = base.join(name);
    let bytes = std::fs::read(&path).with_context(|| format!("reading {}", path.display()))?;
    Ok(Some(read_geotiff(&bytes, name)?))
}

/// The grids a run starts from: the terrain as the page would load it (the surface DEM, or
/// bed plus ice where the scenario gives no surface), the bed, the initial thickness and the
/// starting succession stages, if given.
struct IceInputs {
    terrain: Grid,
    bed: Grid,
    thickness: Grid,
    stages: Option<Grid>,
}

fn read_bytes(path: &Path) -> Result<Vec<u8>> {
    std::fs::read(path).with_context(|| format!("reading {}", path.display()))
}

/// The run's grids. A surface DEM with a thickness grid, a GeoJSON outline or no ice goes
/// through the engine's run inputs exactly as the page's files do (ice and vegetation
/// fitted onto the terrain); the other combinations the page does not offer are read here.
fn load_inputs(
    scenario: &Scenario,
    base: &Path,
    vegetation: Option<&Path>,
    cell_size_m: Option<f64>,
) -> Result<IceInputs> {
    let grids = &scenario.grids;
    let vegetation_file = match vegetation {
        Some(path) => Some((read_bytes(path)?, path.display().to_string())),
        None => None,
    };
    let mask_is_tiff = grids
        .glacier_outline_or_mask
        .as_deref()
        .is_some_and(|name| !is_geojson(name));
    if let (Some(surface_name), None, false) =
        (&grids.surface_elevation, &grids.bed_elevation, mask_is_tiff)
    {
        let surface_bytes = read_bytes(&base.join(surface_name))?;
        let thickness_bytes;
        let outline_text;
        let ice = match (&grids.ice_thickness, &grids.glacier_outline_or_mask) {
            (Some(name), _) => {
                thickness_bytes = read_bytes(&base.join(name))?;
                IceInput::Thickness {
                    bytes: &thickness_bytes,
                    name,
                }
            }
            (None, Some(name)) => {
                let path = base.join(name);
                outline_text = std::fs::read_to_string(&path)
                    .with_context(|| format!("reading {}", path.display()))?;
                IceInput::Outline {
                    geojson: &outline_text,
                    name,
                }
            }
            (None, None) => IceInput::None,
        };
        let terrain_options = ReadOptions {
            cell_size_m,
            ..ReadOptions::default()
        };
        let grids = read_run_inputs(
            scenario,
            &surface_bytes,
            surface_name,
            terrain_options,
            ice,
            vegetation_file
                .as_ref()
                .map(|(bytes, name)| (bytes.as_slice(), name.as_str())),
        )?;
        for note in &grids.notes {
            outln!("{note}");
        }
        return Ok(IceInputs {
            terrain: grids.surface_m,
            bed: grids.bed_m,
            thickness: grids.ice_thickness_m,
            stages: grids.vegetation,
        });
    }
    if cell_size_m.is_some() {
        bail!(
            "--cell-size coarsens the surface DEM; this scenario gives the bed (or a glacier \
             mask GeoTIFF) instead: coarsen those grids first or name surface_elevation"
        );
    }
    let mut inputs = load_ice_inputs(scenario, base)?;
    if let Some((bytes, name)) = &vegetation_file {
        let (grid, note) = fit_vegetation(&inputs.terrain.geometry, bytes, name)?;
        if let Some(note) = note {
            outln!("{note}");
        }
        inputs.stages = Some(grid);
    }
    Ok(inputs)
}

fn surface_of(bed: &Grid, thickness: &Grid) -> Grid {
    let mut surface = bed.clone();
    for ((z, &h), &missing) in surface
        .values
        .iter_mut()
        .zip(&thickness.values)
        .zip(&thickness.nodata)
    {
        if !missing {
            *z += h;
        }
    }
    surface
}

/// Terrain, bed and initial thickness from whichever grids the scenario names.
fn load_ice_inputs(scenario: &Scenario, base: &Path) -> Result<IceInputs> {
    let grids = &scenario.grids;
    let surface = read_grid(base, &grids.surface_elevation)?;
    let bed = read_grid(base, &grids.bed_elevation)?;
    let thickness = read_grid(base, &grids.ice_thickness)?;
    // A glacier outline is a GeoTIFF mask or a GeoJSON polygon file.
    let outline_text = match grids.glacier_outline_or_mask.as_deref() {
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
        None => read_grid(base, &grids.glacier_outline_or_mask)?,
    };
    let zero_like = |grid: &Grid| Grid::filled(grid.geometry, 0.0);
    let inputs = |terrain: Grid, bed: Grid, thickness: Grid| IceInputs {
        terrain,
        bed,
        thickness,
        stages: None,
    };
    Ok(match (surface, bed, thickness, mask) {
        (_, Some(bed), Some(thickness), None) => {
            inputs(surface_of(&bed, &thickness), bed, thickness)
        }
        (Some(surface), None, Some(thickness), None) => {
            let bed = bed_from_surface(&surface, &thickness)?;
            inputs(surface, bed, thickness)
        }
        (Some(surface), None, None, mask) if mask.is_some() || outline_text.is_some() => {
            let name = grids.glacier_outline_or_mask.as_deref().unwrap_or_default();
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
            outln!(
                "thickness from the glacier mask: area {:.3} km2, volume {:.4} km3 \
                 (volume-area scaling: {:.4} km3)",
                estimate.area_m2 / 1e6,
                estimate.volume_m3 / 1e9,
                estimate.scaling_volume_m3 / 1e9
            );
            let thickness = estimate.ice_thickness_m;
            let bed = bed_from_surface(&surface, &thickness)?;
            inputs(surface, bed, thickness)
        }
        (None, Some(bed), None, None) => {
            let thickness = zero_like(&bed);
            inputs(bed.clone(), bed, thickness)
        }
        (Some(surface), None, None, None) => {
            let thickness = zero_like(&surface);
            inputs(surface.clone(), surface, thickness)
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
    write_file(&out_dir.join(name), &write_geotiff(&grid))
}

fn layer_like(bed: &Grid) -> Grid {
    let mut grid = Grid::filled(bed.geometry, 0.0);
    grid.nodata.clone_from(&bed.nodata);
    grid.nodata_value = Some(NODATA_VALUE);
    grid
}
