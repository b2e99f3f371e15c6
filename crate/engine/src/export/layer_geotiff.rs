//! Any layer of any recorded year as a single-band GeoTIFF (TIFF 6.0 with OGC GeoTIFF 1.1
//! tags, OGC 19-008r4), georeferenced exactly as the terrain DEM, through the engine's
//! writer [`crate::io::geotiff::write_geotiff_described`], which puts the layer, year, scenario
//! and caution in the ImageDescription tag.
//!
//! Values and types: ice thickness (m, f32, 0 where ice-free); exposure year (f32: the
//! year, [`EXPOSED_BEFORE_START_VALUE`] for ground ice-free from the start, nodata under ice);
//! succession stage (u8 codes 0-6, nodata 255); cover of a plant type (%, f32); soil
//! index (0-1, f32); new lakes (fill depth m, f32, 0 outside the lakes ice-free that year);
//! steep bare ground (u8, 1 steep bare, 0 other ground, nodata 255). Cells without a DEM
//! value are nodata; the float nodata value is [`NODATA_VALUE`]. All values are those the map
//! draws.

use super::{bed_of, check_layer, check_run, layer_file_stem, ExportError, ExportMeta, CAUTION};
use crate::base::grid::Grid;
use crate::base::terrain::{self, Sun};
use crate::io::geotiff::{write_geotiff_described, SampleType, TiffCompression, WriteOptions};
use crate::run::timeline::{PlantQuantity, Timeline, COVERED, NEVER_COVERED};
use crate::view::lakes::LakeMap;
use crate::view::layers::LayerKind;
use crate::view::steep_ground;

/// Nodata marker of float layers.
pub const NODATA_VALUE: f64 = -9999.0;

/// Nodata marker of the stage layer.
pub const STAGE_NODATA: f64 = 255.0;

/// Exposure-year value of ground that was ice-free from the start.
pub const EXPOSED_BEFORE_START_VALUE: f32 = -1.0;

/// The values of `kind` at the end of `year` on the DEM's grid.
pub fn layer_grid(
    timeline: &Timeline,
    dem: &Grid,
    kind: LayerKind,
    year: i32,
) -> Result<Grid, ExportError> {
    check_run(timeline, dem, year)?;
    check_layer(timeline, kind)?;
    let mut grid = Grid::filled(dem.geometry, 0.0);
    grid.nodata.clone_from(&dem.nodata);
    grid.nodata_value = Some(NODATA_VALUE);
    let values = &mut grid.values;
    match kind {
        LayerKind::IceThickness => timeline.fill_ice_thickness(year, values),
        LayerKind::ExposureYear => {
            let mut exposure = Vec::new();
            timeline.fill_exposure(year, &mut exposure);
            for (idx, &e) in exposure.iter().enumerate() {
                values[idx] = match e {
                    COVERED => {
                        grid.nodata[idx] = true;
                        0.0
                    }
                    NEVER_COVERED => EXPOSED_BEFORE_START_VALUE,
                    y => y as f32,
                };
            }
        }
        LayerKind::Stage => {
            let mut stage = Vec::new();
            timeline.fill_stage(year, &mut stage);
            for (v, &s) in values.iter_mut().zip(&stage) {
                *v = f32::from(s);
            }
            grid.nodata_value = Some(STAGE_NODATA);
        }
        LayerKind::Cover(_) | LayerKind::Soil => {
            let (quantity, scale) = match kind {
                LayerKind::Cover(t) => (PlantQuantity::Cover(t), 100.0 / 255.0),
                _ => (PlantQuantity::Soil, 1.0 / 255.0),
            };
            timeline.for_each_plant_value(year, quantity, |idx, q| values[idx] = q * scale);
        }
        LayerKind::Lakes => {
            LakeMap::new_lakes(&bed_of(dem, timeline), timeline)
                .fill_year_depth(timeline, year, values);
        }
        LayerKind::Domain => {
            if let Some(start) = timeline.run_start() {
                for (v, &inside) in values.iter_mut().zip(&start.domain) {
                    *v = f32::from(u8::from(inside));
                }
            }
            grid.nodata_value = Some(STAGE_NODATA);
        }
        LayerKind::SteepBare => {
            let bed = bed_of(dem, timeline);
            let slope = terrain::derivatives(&bed, Sun::default()).slope_deg;
            let mut stage = Vec::new();
            timeline.fill_stage(year, &mut stage);
            steep_ground::for_each_steep_bare(
                &steep_ground::steep_cells(&bed, &slope),
                &stage,
                |c| values[c] = 1.0,
            );
            grid.nodata_value = Some(STAGE_NODATA);
        }
    }
    for (v, &missing) in grid.values.iter_mut().zip(&grid.nodata) {
        if missing {
            *v = f32::NAN;
        }
    }
    Ok(grid)
}

/// `kind` at the end of `year` as GeoTIFF bytes (Deflate; u8 for stages and steep bare
/// ground, else f32), with
/// the layer, year, provenance and caution in its ImageDescription.
pub fn layer_geotiff(
    timeline: &Timeline,
    dem: &Grid,
    meta: &ExportMeta,
    kind: LayerKind,
    year: i32,
) -> Result<Vec<u8>, ExportError> {
    let grid = layer_grid(timeline, dem, kind, year)?;
    let options = WriteOptions {
        sample_type: if matches!(
            kind,
            LayerKind::Stage | LayerKind::SteepBare | LayerKind::Domain
        ) {
            SampleType::U8
        } else {
            SampleType::F32
        },
        compression: TiffCompression::Deflate,
        horizontal_predictor: false,
    };
    let description = format!(
        "{} at the end of {year}; {}. {CAUTION}",
        layer_file_stem(timeline, kind),
        meta.provenance()
    );
    write_geotiff_described(&grid, options, Some(&description)).map_err(|e| ExportError::Encode {
        format: "GeoTIFF",
        message: e.to_string(),
    })
}
