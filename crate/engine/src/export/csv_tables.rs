//! CSV tables after RFC 4180 (comma-separated fields, CRLF line ends, fields with commas,
//! quotes or line breaks quoted with doubled quotes): the yearly summary, every cell of one
//! year (streamed in chunks of rows) and the history of chosen cells.
//!
//! Each table opens with `#` comment lines naming the scenario, seed, engine version and the
//! caution, then one header row whose column names carry their units. Readers that do not
//! skip comments can drop the lines before the header. Numbers have fixed precision, so the
//! page and the command line write the same bytes: coordinates 0.01 m, elevations 0.1 m, ice
//! thickness 0.01 m, cover 0.1 %, soil index 0.001.

use std::fmt::Write as _;

pub use super::column_word;
use super::layer_geotiff::EXPOSED_BEFORE_START_VALUE;
use super::{check_grid, check_run, one_line, ExportError, ExportMeta, CAUTION};
use crate::base::grid::Grid;
use crate::run::recorded::RecordedRow;
use crate::run::timeline::{PlantQuantity, Timeline, COVERED};
use crate::view::layers::STAGE_PALETTE;

/// Line end of every record (RFC 4180 section 2.1).
pub(crate) const CRLF: &str = "\r\n";

/// Rows per chunk the streamed cell table suggests (about 1 MB of text).
pub const DEFAULT_CHUNK_ROWS: usize = 16_384;

/// A field as RFC 4180 wants it: quoted when it holds a comma, quote or line break.
pub fn csv_field(text: &str) -> String {
    if text.contains([',', '"', '\r', '\n']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// The comment lines every table opens with.
pub(crate) fn preamble(meta: &ExportMeta, table: &str) -> String {
    let mut out = String::new();
    let _ = write!(out, "# Forefield {table}{CRLF}");
    let _ = write!(out, "# scenario: {}{CRLF}", one_line(&meta.scenario_name));
    let _ = write!(out, "# seed: {}{CRLF}", meta.seed);
    let _ = write!(out, "# engine version: {}{CRLF}", meta.engine_version);
    for note in &meta.run_notes {
        let _ = write!(out, "# ice start: {}{CRLF}", one_line(note));
    }
    let _ = write!(out, "# caution: {CAUTION}{CRLF}");
    out
}

/// Header of a row: the names joined, quoted where needed, with the line end.
pub(crate) fn header_row(names: &[String]) -> String {
    let mut out = names
        .iter()
        .map(|n| csv_field(n))
        .collect::<Vec<_>>()
        .join(",");
    out.push_str(CRLF);
    out
}

/// The yearly summary of a whole run: one row per year (start state first) with the ice
/// figures and, for runs with plants, the area per succession stage and the mean cover of
/// each plant type (`type_names`, as the timeline keeps them).
pub fn summary_csv(rows: &[RecordedRow], type_names: &[String], meta: &ExportMeta) -> String {
    let with_plants = rows.iter().any(|r| r.vegetation.is_some());
    let mut names: Vec<String> = [
        "year",
        "temperature_anomaly_c",
        "ela_m",
        "ice_area_km2",
        "ice_volume_km3",
        "newly_exposed_area_km2",
        "max_thickness_m",
        "flow_substeps",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    if with_plants {
        for (label, _) in STAGE_PALETTE {
            names.push(format!("area_{}_km2", column_word(label)));
        }
        for name in type_names {
            names.push(format!("mean_cover_{}_pct", column_word(name)));
        }
        names.push("long_distance_dispersal_events".into());
    }
    let mut csv = preamble(meta, "yearly summary");
    csv.push_str(&header_row(&names));
    for r in rows {
        let i = &r.ice;
        let _ = write!(
            csv,
            "{},{:.4},{:.2},{:.6},{:.8},{:.6},{:.2},{}",
            i.year,
            i.temperature_anomaly_c,
            i.ela_m,
            i.ice_area_km2,
            i.ice_volume_km3,
            i.newly_exposed_area_km2,
            i.max_thickness_m,
            i.substeps
        );
        if with_plants {
            match &r.vegetation {
                Some(v) => {
                    for area in v.stage_area_km2 {
                        let _ = write!(csv, ",{area:.6}");
                    }
                    for t in 0..type_names.len() {
                        let cover = v.mean_cover.get(t).copied().unwrap_or(0.0);
                        let _ = write!(csv, ",{:.3}", 100.0 * cover);
                    }
                    let _ = write!(csv, ",{}", v.long_distance_events);
                }
                None => csv.push_str(&",".repeat(STAGE_PALETTE.len() + type_names.len() + 1)),
            }
        }
        csv.push_str(CRLF);
    }
    csv
}

/// What the cell tables' elevation and exposure columns hold, as `#` lines.
const STATE_COLUMN_NOTES: &str = "# ground_elevation_m: the ground, under the ice where there is ice; \
surface_elevation_m: the top of the ice, or the ground where ice-free\r\n\
# exposure_year: the latest year the cell became ice-free; -1 ice-free at the start; empty under ice\r\n";

/// Columns of the cell tables after the position and year columns.
fn state_columns(timeline: &Timeline) -> Vec<String> {
    let mut names: Vec<String> = vec![
        "ground_elevation_m".into(),
        "ice_thickness_m".into(),
        "surface_elevation_m".into(),
        "exposure_year".into(),
    ];
    if timeline.has_plants() {
        names.push("stage_code".into());
        names.push("stage".into());
        for name in timeline.type_names() {
            names.push(format!("cover_{}_pct", column_word(name)));
        }
        names.push("soil_index".into());
    }
    names
}

/// One cell's state in one year, as the cell tables write it.
struct CellState {
    ground_m: f32,
    thickness_m: f32,
    /// Exposure year, or [`COVERED`] / [`crate::run::timeline::NEVER_COVERED`].
    exposure: i32,
    /// Stage code, for runs with plants.
    stage: Option<u8>,
}

/// Writes one cell's state fields (after a comma) as [`state_columns`] names them.
fn write_state(out: &mut String, timeline: &Timeline, idx: usize, year: i32, cell: CellState) {
    let CellState {
        ground_m,
        thickness_m,
        exposure,
        stage,
    } = cell;
    // The layer GeoTIFF's coding: under ice has no year (empty here, nodata there).
    let exposure = match exposure {
        COVERED => String::new(),
        crate::run::timeline::NEVER_COVERED => format!("{EXPOSED_BEFORE_START_VALUE}"),
        y => y.to_string(),
    };
    let _ = write!(
        out,
        ",{:.1},{:.2},{:.1},{}",
        ground_m,
        thickness_m,
        ground_m + thickness_m,
        exposure
    );
    if let Some(code) = stage {
        let label = STAGE_PALETTE.get(usize::from(code)).map_or("", |s| s.0);
        let _ = write!(out, ",{code},{label}");
        for t in 0..timeline.type_names().len() {
            let cover = timeline
                .plant_value_at(idx, year, PlantQuantity::Cover(t))
                .unwrap_or(0.0);
            let _ = write!(out, ",{:.1}", 100.0 * cover);
        }
        let soil = timeline
            .plant_value_at(idx, year, PlantQuantity::Soil)
            .unwrap_or(0.0);
        let _ = write!(out, ",{soil:.3}");
    }
}

/// Every valid cell of one year, produced a chunk of rows at a time so that a million-cell
/// table neither blocks the page for long nor sits in memory whole. Columns: `col`, `row`,
/// `easting_m`, `northing_m` (cell centre, in the grid's CRS), `ground_elevation_m` (the
/// DEM less the starting ice), `ice_thickness_m`, `surface_elevation_m`, `exposure_year`
/// (the latest year the cell became ice-free, -1 for ground ice-free at the start, empty
/// while under ice) and, for runs with plants, `stage_code`, `stage`, `cover_<type>_pct` and
/// `soil_index`. Cells without a DEM value are left out.
///
/// The stream holds the year's per-cell state (9 bytes a cell), not the timeline, so a front
/// end can keep it between calls beside the timeline it was made from.
#[derive(Clone, Debug)]
pub struct CellsCsv {
    year: i32,
    preamble: Option<String>,
    ground_m: Vec<f32>,
    thickness_m: Vec<f32>,
    exposure: Vec<i32>,
    stage: Vec<u8>,
    next_cell: usize,
    rows_written: usize,
    rows_total: usize,
}

impl CellsCsv {
    /// Prepares the table of `year`.
    pub fn new(
        timeline: &Timeline,
        dem: &Grid,
        meta: &ExportMeta,
        year: i32,
    ) -> Result<CellsCsv, ExportError> {
        check_run(timeline, dem, year)?;
        let mut head = preamble(meta, &format!("cells of year {year}"));
        let _ = write!(
            head,
            "# crs: {}, cell size {} m{CRLF}",
            dem.geometry
                .epsg
                .map_or("not stated".to_string(), |c| format!("EPSG:{c}")),
            dem.geometry.cell_size_m
        );
        head.push_str(STATE_COLUMN_NOTES);
        let mut names: Vec<String> = ["col", "row", "easting_m", "northing_m"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        names.extend(state_columns(timeline));
        head.push_str(&header_row(&names));
        let ground_m = super::bed_of(dem, timeline).values;
        let mut thickness_m = Vec::new();
        timeline.fill_ice_thickness(year, &mut thickness_m);
        let mut exposure = Vec::new();
        timeline.fill_exposure(year, &mut exposure);
        let mut stage = Vec::new();
        if timeline.has_plants() {
            timeline.fill_stage(year, &mut stage);
        }
        Ok(CellsCsv {
            year,
            preamble: Some(head),
            ground_m,
            thickness_m,
            exposure,
            stage,
            next_cell: 0,
            rows_written: 0,
            rows_total: dem.n_valid(),
        })
    }

    /// Data rows the whole table holds.
    pub fn rows_total(&self) -> usize {
        self.rows_total
    }

    /// Data rows handed out so far.
    pub fn rows_written(&self) -> usize {
        self.rows_written
    }

    /// The next chunk of at most `max_rows` data rows as UTF-8 bytes (the first chunk starts
    /// with the comment lines and the header), or `None` when the table is done.
    /// `timeline` and `dem` must be those the stream was made from.
    pub fn next_chunk(
        &mut self,
        timeline: &Timeline,
        dem: &Grid,
        max_rows: usize,
    ) -> Result<Option<Vec<u8>>, ExportError> {
        check_grid(timeline, dem)?;
        let n = self.ground_m.len();
        if self.next_cell >= n && self.preamble.is_none() {
            return Ok(None);
        }
        let mut out = self.preamble.take().unwrap_or_default();
        let g = &dem.geometry;
        let mut rows = 0;
        while self.next_cell < n && rows < max_rows.max(1) {
            let idx = self.next_cell;
            self.next_cell += 1;
            if dem.nodata[idx] {
                continue;
            }
            let (col, row) = (idx % g.n_cols, idx / g.n_cols);
            let (x, y) = g.cell_centre(col, row);
            let _ = write!(out, "{col},{row},{x:.2},{y:.2}");
            write_state(
                &mut out,
                timeline,
                idx,
                self.year,
                CellState {
                    ground_m: self.ground_m[idx],
                    thickness_m: self.thickness_m[idx],
                    exposure: self.exposure[idx],
                    stage: self.stage.get(idx).copied(),
                },
            );
            out.push_str(CRLF);
            rows += 1;
        }
        self.rows_written += rows;
        Ok(Some(out.into_bytes()))
    }

    /// The whole table at once (small grids, tests).
    pub fn collect(mut self, timeline: &Timeline, dem: &Grid) -> Result<Vec<u8>, ExportError> {
        let mut out = Vec::new();
        while let Some(chunk) = self.next_chunk(timeline, dem, DEFAULT_CHUNK_ROWS)? {
            out.extend_from_slice(&chunk);
        }
        Ok(out)
    }
}

/// The history of a set of cells (one cell, or a zone's cells): one row per cell and year,
/// cells in the order given, years from the start. Columns as [`CellsCsv`] with `year`
/// after the position.
pub fn cell_history_csv(
    timeline: &Timeline,
    dem: &Grid,
    meta: &ExportMeta,
    cells: &[(usize, usize)],
) -> Result<String, ExportError> {
    check_grid(timeline, dem)?;
    let g = &dem.geometry;
    for &(col, row) in cells {
        if col >= g.n_cols || row >= g.n_rows {
            return Err(ExportError::CellOutOfRange {
                col,
                row,
                n_cols: g.n_cols,
                n_rows: g.n_rows,
            });
        }
    }
    let mut out = preamble(meta, "cell history");
    out.push_str(STATE_COLUMN_NOTES);
    let mut names: Vec<String> = ["col", "row", "easting_m", "northing_m", "year"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    names.extend(state_columns(timeline));
    out.push_str(&header_row(&names));
    for &(col, row) in cells {
        let idx = row * g.n_cols + col;
        let (x, y) = g.cell_centre(col, row);
        let ground_m = match timeline.run_start() {
            Some(start) if start.bed_m.len() == dem.values.len() => start.bed_m[idx],
            _ => dem.values[idx] - timeline.ice_thickness_at(idx, timeline.start_year()),
        };
        let stages = timeline.has_plants().then(|| timeline.stage_history(idx));
        for (k, year) in (timeline.start_year()..=timeline.last_year()).enumerate() {
            let exposure = match timeline.cover_at(idx, year) {
                (true, _) => COVERED,
                (false, Some(y)) => y,
                (false, None) => crate::run::timeline::NEVER_COVERED,
            };
            let _ = write!(out, "{col},{row},{x:.2},{y:.2},{year}");
            write_state(
                &mut out,
                timeline,
                idx,
                year,
                CellState {
                    ground_m,
                    thickness_m: timeline.ice_thickness_at(idx, year),
                    exposure,
                    stage: stages.as_ref().and_then(|s| s.get(k).copied()),
                },
            );
            out.push_str(CRLF);
        }
    }
    Ok(out)
}
