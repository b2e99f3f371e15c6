//! The grids a run starts from, read from file bytes and fitted onto the terrain: the
//! surface DEM, the ice (a thickness grid, or a glacier outline whose thickness is estimated
//! by perfect plasticity, see `ice::outline_thickness`) and the existing vegetation. The page and the
//! command line both hand their files' bytes here, so they start runs from the same grids.

use thiserror::Error;

use crate::base::grid::{Grid, GridGeometry};
use crate::base::load_error::{LoadError, LoadProblem};
use crate::ice::outline_thickness::{thickness_from_outline, OutlineError as EstimateError};
use crate::io::align::{fit_to, Resampling};
use crate::io::geotiff::{read_geotiff, read_geotiff_with, Coarsening, ReadOptions};
use crate::io::outline::{outline_mask, OutlineError};
use crate::plants::vegetation::N_STAGES;
use crate::run::scenario::Scenario;
use crate::run::simulation::{bed_from_surface, SimulationError};

/// Thickest ice accepted in a thickness grid, m: the thickest ice measured is a little over
/// 4 km (from memory), a mountain glacier a few hundred metres.
pub const MAX_ICE_THICKNESS_M: f64 = 5000.0;

/// Where the ice at the start comes from.
#[derive(Clone, Copy, Debug)]
pub enum IceInput<'a> {
    /// No ice at the start.
    None,
    /// An ice-thickness GeoTIFF, m; nodata and cells outside it count as no ice.
    Thickness { bytes: &'a [u8], name: &'a str },
    /// A GeoJSON glacier outline in the terrain's CRS.
    Outline { geojson: &'a str, name: &'a str },
}

/// A run's inputs could not be used.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum RunInputError {
    #[error(transparent)]
    Load(#[from] LoadError),
    #[error(transparent)]
    Outline(#[from] OutlineError),
    #[error("{file}: {source}")]
    Estimate { file: String, source: EstimateError },
    #[error(transparent)]
    Ice(#[from] SimulationError),
}

/// The grids of a run on the terrain's cells, with notes on what was resampled or estimated.
#[derive(Clone, Debug, PartialEq)]
pub struct RunInputs {
    pub surface_m: Grid,
    pub bed_m: Grid,
    pub ice_thickness_m: Grid,
    /// Succession stage codes 0-6, when a vegetation grid was given.
    pub vegetation: Option<Grid>,
    pub notes: Vec<String>,
}

/// Reads an ice-thickness GeoTIFF onto the terrain's cells (resampled if needed), checking
/// that every thickness is plausible. Returns the grid and a note when it was resampled.
pub fn fit_ice_thickness(
    terrain: &GridGeometry,
    bytes: &[u8],
    name: &str,
) -> Result<(Grid, Option<String>), LoadError> {
    let grid = read_geotiff(bytes, name)?;
    if let Some((lo, hi)) = grid.value_range() {
        let worst = if lo < 0.0 { lo } else { hi };
        if lo < 0.0 || f64::from(hi) > MAX_ICE_THICKNESS_M {
            return Err(LoadError::new(
                name,
                LoadProblem::ValueOutOfRange {
                    what: "ice thickness",
                    value: f64::from(worst),
                    unit: "m",
                    min: 0.0,
                    max: MAX_ICE_THICKNESS_M,
                },
            ));
        }
    }
    let fitted = fit_to(grid, terrain, Resampling::Continuous, name)?;
    Ok((fitted.grid, fitted.note))
}

/// Reads a GeoTIFF of succession stage codes (0 ice ... 6 mature forest) onto the terrain's
/// cells, by the nearest cell if it must be resampled; nodata starts as bare ground.
pub fn fit_vegetation(
    terrain: &GridGeometry,
    bytes: &[u8],
    name: &str,
) -> Result<(Grid, Option<String>), LoadError> {
    // Class codes are never averaged: a grid too large keeps each block's central cell.
    let options = ReadOptions {
        coarsening: Coarsening::Central,
        ..ReadOptions::default()
    };
    let grid = read_geotiff_with(bytes, name, options)?.grid;
    let max_code = (N_STAGES - 1) as f32;
    if let Some(&bad) = grid
        .values
        .iter()
        .zip(&grid.nodata)
        .filter(|&(_, &missing)| !missing)
        .map(|(v, _)| v)
        .find(|&&v| !(0.0..=max_code).contains(&v) || v.fract() != 0.0)
    {
        return Err(LoadError::new(
            name,
            LoadProblem::BadClassCode {
                what: "succession stage code (0 ice, 1 bare ground ... 6 mature forest)",
                value: f64::from(bad),
                max: max_code as u8,
            },
        ));
    }
    let fitted = fit_to(grid, terrain, Resampling::Nearest, name)?;
    Ok((fitted.grid, fitted.note))
}

/// Reads a glacier domain onto the terrain's cells: a GeoJSON polygon (the cells whose centre
/// lies inside; a name ending in `.geojson` or `.json`) or a GeoTIFF whose cells above zero
/// are inside (resampled by the nearest cell if needed). The grid holds 1 inside, 0 outside.
pub fn fit_domain(
    terrain: &GridGeometry,
    bytes: &[u8],
    name: &str,
) -> Result<(Grid, Option<String>), RunInputError> {
    let lower = name.to_ascii_lowercase();
    let mut grid = Grid::filled(*terrain, 0.0);
    if lower.ends_with(".geojson") || lower.ends_with(".json") {
        // Bytes that are not UTF-8 fail as GeoJSON, with the parser's message.
        let text = String::from_utf8_lossy(bytes);
        let mask = outline_mask(&text, name, terrain)?;
        for (v, inside) in grid.values.iter_mut().zip(mask) {
            *v = if inside { 1.0 } else { 0.0 };
        }
        return Ok((grid, None));
    }
    let fitted = fit_to(
        read_geotiff(bytes, name)?,
        terrain,
        Resampling::Nearest,
        name,
    )?;
    for ((v, &d), &missing) in grid
        .values
        .iter_mut()
        .zip(&fitted.grid.values)
        .zip(&fitted.grid.nodata)
    {
        *v = if !missing && d > 0.0 { 1.0 } else { 0.0 };
    }
    Ok((grid, fitted.note))
}

/// Estimates the ice thickness inside a GeoJSON glacier outline from the surface slope, with
/// the scenario's plasticity parameters; the note gives area, volume and the volume-area
/// scaling check.
pub fn outline_thickness(
    surface_m: &Grid,
    geojson: &str,
    name: &str,
    scenario: &Scenario,
) -> Result<(Grid, String), RunInputError> {
    let mask = outline_mask(geojson, name, &surface_m.geometry)?;
    let estimate = thickness_from_outline(
        surface_m,
        &mask,
        &scenario.outline,
        scenario.flow.ice_density_kg_m3,
    )
    .map_err(|source| RunInputError::Estimate {
        file: name.to_string(),
        source,
    })?;
    let note = format!(
        "{name}: thickness estimated inside the outline by perfect plasticity: area {:.3} km², \
         volume {:.4} km³ (volume-area scaling gives {:.4} km³)",
        estimate.area_m2 / 1e6,
        estimate.volume_m3 / 1e9,
        estimate.scaling_volume_m3 / 1e9
    );
    Ok((estimate.ice_thickness_m, note))
}

/// Reads the surface DEM (coarsened on load as `terrain_options` ask) and fits the ice and
/// vegetation onto it; the bed is the surface less the ice.
pub fn read_run_inputs(
    scenario: &Scenario,
    surface_bytes: &[u8],
    surface_name: &str,
    terrain_options: ReadOptions,
    ice: IceInput<'_>,
    vegetation: Option<(&[u8], &str)>,
) -> Result<RunInputs, RunInputError> {
    let read = read_geotiff_with(surface_bytes, surface_name, terrain_options)?;
    let surface_m = read.grid;
    let terrain = surface_m.geometry;
    let mut notes: Vec<String> = read
        .note
        .map(|n| format!("{surface_name}: {n}"))
        .into_iter()
        .collect();
    let ice_thickness_m = match ice {
        IceInput::None => Grid::filled(terrain, 0.0),
        IceInput::Thickness { bytes, name } => {
            let (grid, note) = fit_ice_thickness(&terrain, bytes, name)?;
            notes.extend(note);
            grid
        }
        IceInput::Outline { geojson, name } => {
            let (grid, note) = outline_thickness(&surface_m, geojson, name, scenario)?;
            notes.push(note);
            grid
        }
    };
    let vegetation = match vegetation {
        Some((bytes, name)) => {
            let (grid, note) = fit_vegetation(&terrain, bytes, name)?;
            notes.extend(note);
            Some(grid)
        }
        None => None,
    };
    let bed_m = bed_from_surface(&surface_m, &ice_thickness_m)?;
    Ok(RunInputs {
        surface_m,
        bed_m,
        ice_thickness_m,
        vegetation,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::geotiff::write_geotiff;

    fn terrain() -> GridGeometry {
        GridGeometry {
            n_cols: 8,
            n_rows: 6,
            cell_size_m: 50.0,
            west_m: 400_000.0,
            north_m: 5_100_000.0,
            epsg: Some(32626),
        }
    }

    fn tiff(grid: &Grid) -> Vec<u8> {
        write_geotiff(grid)
    }

    #[test]
    fn negative_thickness_is_refused_naming_the_file() {
        let mut grid = Grid::filled(terrain(), 10.0);
        grid.values[3] = -2.0;
        let err = fit_ice_thickness(&terrain(), &tiff(&grid), "ice.tif").unwrap_err();
        assert_eq!(err.file, "ice.tif");
        assert!(err.to_string().contains("-2"), "{err}");
    }

    #[test]
    fn stage_codes_must_be_whole_numbers_up_to_six() {
        let mut grid = Grid::filled(terrain(), 3.0);
        grid.values[0] = 2.5;
        let err = fit_vegetation(&terrain(), &tiff(&grid), "veg.tif").unwrap_err();
        assert!(err.to_string().contains("2.5"), "{err}");
        grid.values[0] = 7.0;
        assert!(fit_vegetation(&terrain(), &tiff(&grid), "veg.tif").is_err());
        grid.values[0] = 6.0;
        let (fitted, note) = fit_vegetation(&terrain(), &tiff(&grid), "veg.tif").unwrap();
        assert_eq!(fitted.values[0], 6.0);
        assert!(note.is_none());
    }

    #[test]
    fn a_coarser_ice_grid_is_resampled_and_the_bed_follows() {
        let mut coarse = terrain();
        coarse.n_cols = 4;
        coarse.n_rows = 3;
        coarse.cell_size_m = 100.0;
        let ice = Grid::filled(coarse, 40.0);
        let surface = Grid::filled(terrain(), 2500.0);
        let inputs = read_run_inputs(
            &Scenario::default(),
            &tiff(&surface),
            "dem.tif",
            ReadOptions::default(),
            IceInput::Thickness {
                bytes: &tiff(&ice),
                name: "ice.tif",
            },
            None,
        )
        .unwrap();
        assert!(inputs.notes[0].contains("resampled"), "{:?}", inputs.notes);
        assert!(inputs
            .bed_m
            .values
            .iter()
            .all(|&z| (z - 2460.0).abs() < 1e-3));
    }
}
