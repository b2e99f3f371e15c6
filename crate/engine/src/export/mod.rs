//! Exports of a recorded run as bytes or text, identical in the page and on the command line:
//! PNG snapshots, CSV tables, GeoJSON shapes and GeoTIFF layers. Each takes what both front
//! ends hold: the [`Timeline`], the terrain DEM [`Grid`] (geometry, EPSG, elevations), the
//! scenario's name and seed ([`ExportMeta`]) and, for the summary, the recorded rows.
//!
//! Nothing here touches files: the caller writes or downloads the bytes.

pub mod csv_tables;
pub mod geojson_shapes;
pub mod layer_geotiff;
pub mod png_snapshot;
pub mod zones;

use thiserror::Error;

use crate::base::grid::Grid;
use crate::base::terrain::{self, Sun};
use crate::run::scenario::Scenario;
use crate::run::timeline::Timeline;
use crate::view::layers::{LayerKind, LayerRenderer};

/// The caution every output carries.
pub const CAUTION: &str = "Outputs are planning-level scenarios, not hazard assessments or \
forecasts; consult local authorities and qualified professionals about lakes, slopes and siting.";

/// Version of the engine that wrote an export.
pub const ENGINE_VERSION: &str = env!("CARGO_PKG_VERSION");

/// What every export states about where it came from.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ExportMeta {
    pub scenario_name: String,
    pub seed: u64,
    pub engine_version: &'static str,
    /// How the run's ice was set up (ELA and its calibration, relaxation, domain), one line
    /// each; empty for a run recorded without them.
    pub run_notes: Vec<String>,
}

impl ExportMeta {
    pub fn from_scenario(scenario: &Scenario) -> ExportMeta {
        ExportMeta {
            scenario_name: scenario.name.clone(),
            seed: scenario.seed,
            engine_version: ENGINE_VERSION,
            run_notes: Vec::new(),
        }
    }

    /// The provenance of a recorded run: the scenario's, plus the run's start-up notes.
    pub fn for_run(scenario: &Scenario, timeline: &Timeline) -> ExportMeta {
        ExportMeta {
            run_notes: timeline
                .run_start()
                .map(|s| s.notes.clone())
                .unwrap_or_default(),
            ..ExportMeta::from_scenario(scenario)
        }
    }

    /// One line naming the scenario, seed and engine (no line breaks).
    pub fn provenance(&self) -> String {
        let mut text = format!(
            "scenario \"{}\", seed {}, Forefield engine {}",
            one_line(&self.scenario_name),
            self.seed,
            self.engine_version
        );
        for note in &self.run_notes {
            text.push_str("; ");
            text.push_str(&one_line(note));
        }
        text
    }
}

/// An export could not be made from these inputs.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ExportError {
    #[error("unknown layer {0:?}")]
    UnknownLayer(String),
    #[error("this run has no plants; run with plants to export plant layers")]
    NoPlants,
    #[error("plant type {index} out of range (the run has {n_types})")]
    TypeOutOfRange { index: usize, n_types: usize },
    #[error(
        "the run covers {run_cols} x {run_rows} cells but the terrain has {dem_cols} x {dem_rows}"
    )]
    GridMismatch {
        run_cols: usize,
        run_rows: usize,
        dem_cols: usize,
        dem_rows: usize,
    },
    #[error("year {year} is outside the run ({first} to {last})")]
    YearOutOfRange { year: i32, first: i32, last: i32 },
    #[error("cell (column {col}, row {row}) is off the {n_cols} x {n_rows} grid")]
    CellOutOfRange {
        col: usize,
        row: usize,
        n_cols: usize,
        n_rows: usize,
    },
    #[error("no years were asked for")]
    NoYears,
    #[error("cannot encode {format}: {message}")]
    Encode {
        format: &'static str,
        message: String,
    },
}

/// Parses a layer name and checks that the run has it. A plant type's cover is
/// `cover:N` (N from 0 in the scenario's order) or `cover:NAME`, the type's name as written
/// or as its CSV column writes it (`cover:grasses_and_sedges`).
pub fn layer_kind(timeline: &Timeline, name: &str) -> Result<LayerKind, ExportError> {
    let by_name = name.strip_prefix("cover:").and_then(|wanted| {
        let wanted = wanted.trim();
        timeline.type_names().iter().position(|type_name| {
            type_name.eq_ignore_ascii_case(wanted) || column_word(type_name) == column_word(wanted)
        })
    });
    let kind = by_name
        .map(LayerKind::Cover)
        .or_else(|| LayerKind::from_name(name))
        .ok_or_else(|| ExportError::UnknownLayer(name.into()))?;
    check_layer(timeline, kind)?;
    Ok(kind)
}

/// A plant layer asked of a run without plants, or a type the run does not have.
pub fn check_layer(timeline: &Timeline, kind: LayerKind) -> Result<(), ExportError> {
    match kind {
        LayerKind::Stage | LayerKind::Soil | LayerKind::Cover(_) | LayerKind::SteepBare
            if !timeline.has_plants() =>
        {
            Err(ExportError::NoPlants)
        }
        LayerKind::Cover(index) if index >= timeline.type_names().len() => {
            Err(ExportError::TypeOutOfRange {
                index,
                n_types: timeline.type_names().len(),
            })
        }
        _ => Ok(()),
    }
}

/// The layer's name for file names: `ice_thickness`, `exposure_year`, `stage`, `soil`,
/// `cover_<type name>` (as the CSV columns write it), `lakes`, `steep_bare`, `glacier_domain`.
pub fn layer_file_stem(timeline: &Timeline, kind: LayerKind) -> String {
    match kind {
        LayerKind::Cover(t) => {
            let words: Vec<String> = timeline
                .type_names()
                .iter()
                .map(|n| column_word(n))
                .collect();
            match words.get(t) {
                // Two names that write alike would overwrite each other's files.
                Some(word)
                    if !word.is_empty() && words.iter().filter(|w| *w == word).count() == 1 =>
                {
                    format!("cover_{word}")
                }
                _ => format!("cover_type_{}", t + 1),
            }
        }
        _ => fixed_layer_stem(kind),
    }
}

fn fixed_layer_stem(kind: LayerKind) -> String {
    match kind {
        LayerKind::IceThickness => "ice_thickness".into(),
        LayerKind::ExposureYear => "exposure_year".into(),
        LayerKind::Stage => "stage".into(),
        LayerKind::Soil => "soil".into(),
        LayerKind::Cover(t) => format!("cover_type_{}", t + 1),
        LayerKind::Lakes => "lakes".into(),
        LayerKind::SteepBare => "steep_bare".into(),
        LayerKind::Domain => "glacier_domain".into(),
    }
}

/// Checks that the timeline and the DEM cover the same cells and that `year` was recorded.
pub(crate) fn check_run(timeline: &Timeline, dem: &Grid, year: i32) -> Result<(), ExportError> {
    check_grid(timeline, dem)?;
    check_year(timeline, year)
}

pub(crate) fn check_grid(timeline: &Timeline, dem: &Grid) -> Result<(), ExportError> {
    if timeline.n_cols() != dem.n_cols() || timeline.n_rows() != dem.n_rows() {
        return Err(ExportError::GridMismatch {
            run_cols: timeline.n_cols(),
            run_rows: timeline.n_rows(),
            dem_cols: dem.n_cols(),
            dem_rows: dem.n_rows(),
        });
    }
    Ok(())
}

pub(crate) fn check_year(timeline: &Timeline, year: i32) -> Result<(), ExportError> {
    if year < timeline.start_year() || year > timeline.last_year() {
        return Err(ExportError::YearOutOfRange {
            year,
            first: timeline.start_year(),
            last: timeline.last_year(),
        });
    }
    Ok(())
}

/// The bed under the starting ice (DEM less the timeline's starting thickness): the ground
/// the run's maps are shaded with.
pub fn bed_of(dem: &Grid, timeline: &Timeline) -> Grid {
    let mut bed = dem.clone();
    if let Some(start) = timeline.run_start() {
        if start.bed_m.len() == bed.values.len() {
            // The exact bed the run kept: its starting ice may have relaxed.
            for ((z, &b), &missing) in bed.values.iter_mut().zip(&start.bed_m).zip(&dem.nodata) {
                if !missing {
                    *z = b;
                }
            }
            return bed;
        }
    }
    if timeline.n_cells() == bed.values.len() {
        for (idx, z) in bed.values.iter_mut().enumerate() {
            *z -= timeline.ice_thickness_at(idx, timeline.start_year());
        }
    }
    bed
}

/// The renderer the page's map uses for a timeline: layers over Horn hillshade of the bed,
/// so ground the ice leaves shows its own relief rather than the old glacier surface, with
/// the bed's lakes and steep cells found once for the lake and slope layers.
pub fn bed_renderer(dem: &Grid, timeline: &Timeline) -> LayerRenderer {
    let bed = bed_of(dem, timeline);
    let derivatives = terrain::derivatives(&bed, Sun::default());
    LayerRenderer::new(&derivatives.hillshade, &dem.nodata).with_bed_analyses(
        &bed,
        &derivatives.slope_deg,
        timeline,
    )
}

/// Text on one line: line breaks and other control characters become spaces.
pub(crate) fn one_line(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect()
}

/// A name as part of a column name: lower case, runs of other characters as one `_`.
pub fn column_word(name: &str) -> String {
    let mut out = String::new();
    for c in name.chars() {
        if c.is_ascii_alphanumeric() {
            out.push(c.to_ascii_lowercase());
        } else if !out.ends_with('_') {
            out.push('_');
        }
    }
    out.trim_matches('_').to_string()
}
