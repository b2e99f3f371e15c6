//! Writing the engine's exports (PNG snapshot, cell CSV, GeoTIFF layer, GeoJSON shapes, cell
//! history) for chosen years and layers into a folder: shared by `forefield run` and
//! `forefield export`.

use std::path::Path;
use std::time::Instant;

use anyhow::{bail, Context, Result};
use forefield_engine::base::grid::Grid;
use forefield_engine::export::csv_tables::{cell_history_csv, CellsCsv, DEFAULT_CHUNK_ROWS};
use forefield_engine::export::geojson_shapes::{ice_outlines_geojson, stage_polygons_geojson};
use forefield_engine::export::layer_geotiff::layer_geotiff;
use forefield_engine::export::png_snapshot::snapshot_png;
use forefield_engine::export::{bed_renderer, layer_file_stem, layer_kind, ExportMeta};
use forefield_engine::run::timeline::Timeline;
use forefield_engine::view::layers::LayerKind;

/// What to export: years, layers, formats and cells whose history to write (the export
/// options of `run` and `export`). The comma lists are read once the run's years and plant
/// types are known.
#[derive(Clone, Debug, Default, clap::Args)]
#[command(next_help_heading = "Export options")]
pub struct ExportRequest {
    /// Years to export, or `last` (default), `start`, `all`
    #[arg(long, value_name = "Y,Y,...")]
    pub years: Option<String>,
    /// ice_thickness, exposure_year, stage, cover:TYPE, soil, lakes, steep_bare,
    /// glacier_domain, or `all` (default ice_thickness, and stage for runs with plants)
    ///
    /// TYPE is a plant type's name, as written in the scenario (quoted if it has
    /// spaces) or with _ for spaces, or its place in the scenario's list counting
    /// from 0; the default types are listed below.
    #[arg(long, value_name = "L,L,...", verbatim_doc_comment)]
    pub layers: Option<String>,
    /// png, tif, csv, geojson (default all four)
    #[arg(long, value_name = "F,F,...")]
    pub formats: Option<String>,
    /// Also write this cell's history as CSV (repeat for several cells)
    #[arg(long = "cell", value_name = "COL,ROW", value_parser = crate::args::parse_cell)]
    pub cells: Vec<(usize, usize)>,
    /// Also write the timeline of the zone's polygons (repeat for several zones)
    ///
    /// The polygons are in the terrain's CRS; the table is written as
    /// zone_<file stem>_timeline.csv.
    #[arg(long = "zone", value_name = "FILE.geojson", verbatim_doc_comment)]
    pub zones: Vec<String>,
}

pub const FORMATS: [&str; 4] = ["png", "tif", "csv", "geojson"];

impl ExportRequest {
    fn years(&self, timeline: &Timeline) -> Result<Vec<i32>> {
        let (first, last) = (timeline.start_year(), timeline.last_year());
        let text = self.years.as_deref().unwrap_or("last");
        let mut years = Vec::new();
        for word in text.split(',').map(str::trim).filter(|w| !w.is_empty()) {
            match word {
                "last" => years.push(last),
                "start" => years.push(first),
                "all" => years.extend(first..=last),
                y => {
                    let year: i32 = y
                        .parse()
                        .with_context(|| format!("--years: {y:?} is not a year"))?;
                    if !(first..=last).contains(&year) {
                        bail!("--years: {year} is outside the run ({first} to {last})");
                    }
                    years.push(year);
                }
            }
        }
        years.dedup();
        if years.is_empty() {
            bail!("--years names no year");
        }
        Ok(years)
    }

    fn layers(&self, timeline: &Timeline) -> Result<Vec<LayerKind>> {
        let all: Vec<String> = {
            let mut names = vec![
                "ice_thickness".to_string(),
                "exposure_year".to_string(),
                "lakes".to_string(),
                "glacier_domain".to_string(),
            ];
            if timeline.has_plants() {
                names.push("stage".into());
                names.extend((0..timeline.type_names().len()).map(|t| format!("cover:{t}")));
                names.push("soil".into());
                names.push("steep_bare".into());
            }
            names
        };
        let default = if timeline.has_plants() {
            "ice_thickness,stage"
        } else {
            "ice_thickness"
        };
        let text = self.layers.as_deref().unwrap_or(default);
        let names: Vec<String> = if text == "all" {
            all
        } else {
            text.split(',').map(|s| s.trim().to_string()).collect()
        };
        names
            .iter()
            .filter(|n| !n.is_empty())
            .map(|n| layer_kind(timeline, n).with_context(|| format!("--layers {n:?}")))
            .collect()
    }

    fn formats(&self) -> Result<Vec<&'static str>> {
        let Some(text) = self.formats.as_deref() else {
            return Ok(FORMATS.to_vec());
        };
        text.split(',')
            .map(str::trim)
            .filter(|f| !f.is_empty())
            .map(|f| match FORMATS.iter().find(|&&k| k == f) {
                Some(&k) => Ok(k),
                None => bail!("--formats: unknown format {f:?} (png, tif, csv, geojson)"),
            })
            .collect()
    }
}

pub fn write_file(path: &Path, bytes: &[u8]) -> Result<()> {
    std::fs::write(path, bytes).with_context(|| format!("writing {}", path.display()))?;
    outln!("wrote {}", path.display());
    Ok(())
}

/// Writes an export and says how long making it took (the engine keeps no clock).
fn write_timed(path: &Path, make: impl FnOnce() -> Result<Vec<u8>>) -> Result<()> {
    let started = Instant::now();
    let bytes = make()?;
    let seconds = started.elapsed().as_secs_f64();
    std::fs::write(path, &bytes).with_context(|| format!("writing {}", path.display()))?;
    outln!("wrote {} ({seconds:.2} s)", path.display());
    Ok(())
}

/// Writes every export `request` asks for into `out_dir`.
pub fn write_exports(
    out_dir: &Path,
    timeline: &Timeline,
    dem: &Grid,
    meta: &ExportMeta,
    request: &ExportRequest,
) -> Result<()> {
    let years = request.years(timeline)?;
    let layers = request.layers(timeline)?;
    let formats = request.formats()?;
    let wants = |f: &str| formats.contains(&f);
    std::fs::create_dir_all(out_dir).with_context(|| format!("creating {}", out_dir.display()))?;
    let mut renderer = wants("png").then(|| bed_renderer(dem, timeline));
    for &year in &years {
        for &kind in &layers {
            let stem = layer_file_stem(timeline, kind);
            if let Some(renderer) = renderer.as_mut() {
                write_timed(&out_dir.join(format!("snapshot_{stem}_{year}.png")), || {
                    Ok(snapshot_png(timeline, renderer, dem, meta, kind, year)?.png)
                })?;
            }
            if wants("tif") {
                write_timed(&out_dir.join(format!("layer_{stem}_{year}.tif")), || {
                    Ok(layer_geotiff(timeline, dem, meta, kind, year)?)
                })?;
            }
        }
        if wants("csv") {
            let path = out_dir.join(format!("cells_{year}.csv"));
            write_cells_csv(&path, timeline, dem, meta, year)?;
        }
        if wants("geojson") && timeline.has_plants() {
            write_timed(&out_dir.join(format!("stages_{year}.geojson")), || {
                Ok(stage_polygons_geojson(timeline, dem, meta, year)?.into_bytes())
            })?;
        }
    }
    if wants("geojson") {
        write_timed(&out_dir.join("ice_outlines.geojson"), || {
            Ok(ice_outlines_geojson(timeline, dem, meta, &years)?.into_bytes())
        })?;
    }
    for &(col, row) in &request.cells {
        write_timed(
            &out_dir.join(format!("cell_{col}_{row}_history.csv")),
            || Ok(cell_history_csv(timeline, dem, meta, &[(col, row)])?.into_bytes()),
        )?;
    }
    crate::zones::write_zone_timelines(out_dir, timeline, dem, meta, &request.zones)?;
    Ok(())
}

/// The cell table, written a chunk at a time as the page would hand it on.
fn write_cells_csv(
    path: &Path,
    timeline: &Timeline,
    dem: &Grid,
    meta: &ExportMeta,
    year: i32,
) -> Result<()> {
    use std::io::Write as _;
    let started = Instant::now();
    let file =
        std::fs::File::create(path).with_context(|| format!("writing {}", path.display()))?;
    let mut file = std::io::BufWriter::new(file);
    let mut table = CellsCsv::new(timeline, dem, meta, year)?;
    while let Some(chunk) = table.next_chunk(timeline, dem, DEFAULT_CHUNK_ROWS)? {
        file.write_all(&chunk)
            .with_context(|| format!("writing {}", path.display()))?;
    }
    file.flush()
        .with_context(|| format!("writing {}", path.display()))?;
    outln!(
        "wrote {} ({} cells, {:.2} s)",
        path.display(),
        table.rows_total(),
        started.elapsed().as_secs_f64()
    );
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use forefield_engine::run::recorder::TimelineRecorder;
    use forefield_engine::run::timeline::DEFAULT_FRAME_BUDGET_BYTES;

    fn ice_timeline() -> Timeline {
        let mut recorder =
            TimelineRecorder::new(2, 2000, 3, &[5.0, 0.0], DEFAULT_FRAME_BUDGET_BYTES);
        for year in 2001..=2003 {
            recorder.record_year(year, &[5.0, 0.0]);
        }
        recorder.finish(&[5.0, 0.0])
    }

    #[test]
    fn years_layers_and_formats_parse_and_refuse_what_the_run_lacks() {
        let timeline = ice_timeline();
        let mut request = ExportRequest::default();
        assert_eq!(request.years(&timeline).unwrap(), vec![2003]);
        request.years = Some("start,2002".into());
        assert_eq!(request.years(&timeline).unwrap(), vec![2000, 2002]);
        request.years = Some("all".into());
        assert_eq!(request.years(&timeline).unwrap().len(), 4);
        request.years = Some("2010".into());
        assert!(request.years(&timeline).is_err());
        assert_eq!(
            request.layers(&timeline).unwrap(),
            vec![LayerKind::IceThickness]
        );
        request.layers = Some("stage".into());
        assert!(
            request.layers(&timeline).is_err(),
            "an ice-only run has no stages"
        );
        request.formats = Some("png,kml".into());
        assert!(request.formats().is_err());
    }
}
