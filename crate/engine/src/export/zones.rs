//! Zone timelines: a planner's zone (GeoJSON polygons in the terrain's CRS, turned into cells
//! once with [`outline_mask`]) followed through a recorded run year by year, and written as
//! an RFC 4180 table like the other CSV exports (own design).
//!
//! Per year: ice-covered area and ice volume, area newly exposed that year, area per
//! succession stage, and over the zone's ice-free cells (stage code above 0) the mean cover
//! of each plant type and the mean soil index. For planners, the **key years**: the first
//! year in which at least half of the zone's cells are free of ice (thickness below 1 m),
//! and for each stage from pioneer on, the first year in which at least half of its cells are
//! at that stage or a later one (stage code at least the stage's). That is the first year
//! the zone's median cell has got there; the year stays the first even if the zone later
//! falls back (a readvance, a disturbance), and it is the start year when the zone is already
//! there at the start.
//!
//! Cost: every year takes one visit of the ice cells and one stage grid with its changes;
//! covers and soil are linear in time between cover keyframes, so their sums over the
//! ice-free cells are kept per keyframe pair and only corrected for cells that melt out or
//! are covered again. A 1M-cell run of 200 years takes well under a second natively.

use std::fmt::Write as _;

use serde::Serialize;
use thiserror::Error;

use crate::base::grid::{Grid, GridGeometry};
use crate::export::csv_tables::{column_word, header_row, preamble, CRLF};
use crate::export::{check_grid, one_line, ExportError, ExportMeta};
use crate::io::outline::{outline_mask, OutlineError};
use crate::run::timeline::{PlantQuantity, Timeline};
use crate::view::layers::STAGE_PALETTE;

/// Grid cells per zone cell above which a zone reads its own cells (see [`Zone::is_small`]).
const SMALL_ZONE_FACTOR: usize = 8;

/// A zone that could not be made from a file.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ZoneError {
    #[error(transparent)]
    Outline(#[from] OutlineError),
    #[error("{file}: the polygons cover only cells without terrain data (nodata)")]
    OnlyNodata { file: String },
}

/// A set of valid terrain cells, held as runs along rows.
#[derive(Clone, Debug, PartialEq)]
pub struct Zone {
    name: String,
    geometry: GridGeometry,
    /// `[start, end)` cell indices, each inside one row, in grid order.
    spans: Vec<(usize, usize)>,
    n_cells: usize,
}

impl Zone {
    /// The cells of `dem` whose centre lies inside the GeoJSON polygons (`file` names the
    /// file in errors; the zone is named after its last path component). Cells without a
    /// DEM value are left out.
    pub fn from_geojson(text: &str, file: &str, dem: &Grid) -> Result<Zone, ZoneError> {
        let mask = outline_mask(text, file, &dem.geometry)?;
        let inside: Vec<bool> = mask
            .iter()
            .zip(&dem.nodata)
            .map(|(&m, &nodata)| m && !nodata)
            .collect();
        let zone = Zone::from_mask(&inside, &dem.geometry, file_name_of(file));
        if zone.n_cells == 0 {
            return Err(ZoneError::OnlyNodata { file: file.into() });
        }
        Ok(zone)
    }

    /// The cells marked in `mask` (one flag per cell of `geometry`).
    pub fn from_mask(mask: &[bool], geometry: &GridGeometry, name: &str) -> Zone {
        let n_cols = geometry.n_cols.max(1);
        let mut spans = Vec::new();
        for (row, line) in mask.chunks(n_cols).enumerate() {
            let mut col = 0;
            while col < line.len() {
                if !line[col] {
                    col += 1;
                    continue;
                }
                let first = col;
                while col < line.len() && line[col] {
                    col += 1;
                }
                spans.push((row * n_cols + first, row * n_cols + col));
            }
        }
        Zone {
            name: name.to_string(),
            geometry: *geometry,
            n_cells: spans.iter().map(|(a, b)| b - a).sum(),
            spans,
        }
    }

    pub fn name(&self) -> &str {
        &self.name
    }

    pub fn n_cells(&self) -> usize {
        self.n_cells
    }

    /// Area of the zone's cells, km^2.
    pub fn area_km2(&self) -> f64 {
        self.n_cells as f64 * self.cell_km2()
    }

    /// Whether the zone is small enough beside the grid to read its cells one by one rather
    /// than visiting the whole grid every year: a read through the per-cell accessors costs
    /// several cells of a whole-grid pass.
    fn is_small(&self) -> bool {
        self.n_cells * SMALL_ZONE_FACTOR < self.geometry.n_cells()
    }

    fn cell_km2(&self) -> f64 {
        self.geometry.cell_area_m2() / 1e6
    }

    /// Cell indices of the zone, in grid order.
    pub fn cells(&self) -> impl Iterator<Item = usize> + '_ {
        self.spans.iter().flat_map(|&(a, b)| a..b)
    }

    /// The file name the command line and the page give the zone's table:
    /// `zone_<stem>_timeline.csv`, the stem being the file name less its extension, in
    /// letters, digits, `-` and `_`.
    pub fn csv_file_name(&self) -> String {
        let stem = self.name.rsplit_once('.').map_or(&*self.name, |(s, _)| s);
        let stem: String = stem
            .chars()
            .map(|c| {
                if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                    c
                } else {
                    '_'
                }
            })
            .collect();
        format!(
            "zone_{}_timeline.csv",
            if stem.is_empty() { "zone" } else { &stem }
        )
    }
}

/// The last component of a path, either separator.
fn file_name_of(file: &str) -> &str {
    file.rsplit(['/', '\\']).next().unwrap_or(file)
}

/// The first year at least half of a zone's cells have reached a stage.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct KeyYear {
    /// Stage code, 1 meaning ice-free (by ice cover, for any run).
    pub stage_code: u8,
    pub label: String,
    pub year: Option<i32>,
}

/// A zone through a recorded run, one entry per year from the start.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct ZoneTimeline {
    pub name: String,
    pub n_cells: usize,
    pub cell_size_m: f64,
    pub area_km2: f64,
    pub years: Vec<i32>,
    /// Area under ice at least 1 m thick, km^2.
    pub ice_area_km2: Vec<f64>,
    /// Ice volume as the timeline stores it (0.05 m steps), km^3.
    pub ice_volume_km3: Vec<f64>,
    /// Area that was under ice the year before and is not, km^2 (0 in the start year).
    pub newly_exposed_area_km2: Vec<f64>,
    /// Stage names, index = stage code (empty without plants).
    pub stage_names: Vec<String>,
    /// Area per stage (outer, index = stage code) and year (inner), km^2.
    pub stage_area_km2: Vec<Vec<f64>>,
    pub type_names: Vec<String>,
    /// Mean cover per type (outer) and year over the ice-free cells, %; `None` in a year
    /// without ice-free cells.
    pub mean_cover_pct: Vec<Vec<Option<f64>>>,
    /// Mean soil index (0-1) over the ice-free cells.
    pub mean_soil_index: Vec<Option<f64>>,
    pub key_years: Vec<KeyYear>,
}

/// Ice area, volume and newly exposed cells of a zone, year by year.
struct IceSeries {
    n_ice: Vec<usize>,
    volume_m3: Vec<f64>,
    newly_exposed: Vec<usize>,
}

fn ice_series(timeline: &Timeline, zone: &Zone) -> IceSeries {
    if zone.is_small() {
        return ice_series_by_cell(timeline, zone);
    }
    const OUTSIDE: u16 = u16::MAX;
    let n_years = (timeline.last_year() - timeline.start_year()) as usize + 1;
    // Per cell: OUTSIDE, or 1 + the last year offset it was seen under ice (0: not yet).
    let mut seen = vec![OUTSIDE; timeline.n_cells()];
    for idx in zone.cells() {
        seen[idx] = 0;
    }
    let cell_area_m2 = zone.geometry.cell_area_m2();
    let mut out = IceSeries {
        n_ice: Vec::with_capacity(n_years),
        volume_m3: Vec::with_capacity(n_years),
        newly_exposed: Vec::with_capacity(n_years),
    };
    for (k, year) in (timeline.start_year()..=timeline.last_year()).enumerate() {
        let offset = k as u16;
        let (mut n_ice, mut still_ice, mut thickness_sum_m) = (0usize, 0usize, 0.0f64);
        timeline.for_each_ice_cell(year, |idx, h| {
            let mark = &mut seen[idx];
            if *mark == OUTSIDE {
                return;
            }
            n_ice += 1;
            thickness_sum_m += f64::from(h);
            still_ice += usize::from(k > 0 && *mark == offset);
            *mark = offset + 1;
        });
        let before = out.n_ice.last().copied().unwrap_or(n_ice);
        out.newly_exposed
            .push(if k == 0 { 0 } else { before - still_ice });
        out.n_ice.push(n_ice);
        out.volume_m3.push(thickness_sum_m * cell_area_m2);
    }
    out
}

/// As [`ice_series`] for a small zone: only its cells that were ever under ice, each read
/// through [`Timeline::ice_thickness_at`] (zero when ice-free, at least 1 m when covered).
fn ice_series_by_cell(timeline: &Timeline, zone: &Zone) -> IceSeries {
    let mut in_zone = vec![false; timeline.n_cells()];
    for idx in zone.cells() {
        in_zone[idx] = true;
    }
    let mut glaciated = Vec::new();
    timeline.for_each_glaciated_cell(timeline.start_year(), |idx, _| {
        if in_zone[idx] {
            glaciated.push(idx);
        }
    });
    let cell_area_m2 = zone.geometry.cell_area_m2();
    let mut was_covered = vec![false; glaciated.len()];
    let mut out = IceSeries {
        n_ice: Vec::new(),
        volume_m3: Vec::new(),
        newly_exposed: Vec::new(),
    };
    for (k, year) in (timeline.start_year()..=timeline.last_year()).enumerate() {
        let (mut n_ice, mut exposed, mut thickness_sum_m) = (0usize, 0usize, 0.0f64);
        for (&idx, was) in glaciated.iter().zip(was_covered.iter_mut()) {
            let h = timeline.ice_thickness_at(idx, year);
            let covered = h > 0.0;
            n_ice += usize::from(covered);
            exposed += usize::from(k > 0 && *was && !covered);
            thickness_sum_m += f64::from(h);
            *was = covered;
        }
        out.n_ice.push(n_ice);
        out.newly_exposed.push(exposed);
        out.volume_m3.push(thickness_sum_m * cell_area_m2);
    }
    out
}

/// Stage counts per year and, per year, the cells that became ice-free (`true`) or were
/// covered again (`false`), read from stage codes.
struct StageSeries {
    counts: Vec<[usize; 7]>,
    free_at_start: Vec<bool>,
    change_start: Vec<usize>,
    changes: Vec<(usize, bool)>,
}

fn stage_series(timeline: &Timeline, zone: &Zone) -> StageSeries {
    let mut prev = Vec::new();
    let mut cur = Vec::new();
    timeline.fill_stage(timeline.start_year(), &mut prev);
    let mut counts = [0usize; 7];
    let mut free_at_start = vec![false; timeline.n_cells()];
    for idx in zone.cells() {
        let code = usize::from(prev[idx]).min(6);
        counts[code] += 1;
        free_at_start[idx] = code != 0;
    }
    let mut out = StageSeries {
        counts: vec![counts],
        free_at_start,
        change_start: vec![0, 0],
        changes: Vec::new(),
    };
    const CHUNK: usize = 64;
    for year in timeline.start_year() + 1..=timeline.last_year() {
        timeline.fill_stage(year, &mut cur);
        for &(a, b) in &zone.spans {
            // Most cells keep their stage; equal chunks are skipped with a slice compare.
            let mut start = a;
            while start < b {
                let end = (start + CHUNK).min(b);
                if prev[start..end] != cur[start..end] {
                    for idx in start..end {
                        let (old, new) = (prev[idx].min(6), cur[idx].min(6));
                        if old != new {
                            counts[usize::from(old)] -= 1;
                            counts[usize::from(new)] += 1;
                            if (old == 0) != (new == 0) {
                                out.changes.push((idx, new != 0));
                            }
                        }
                    }
                }
                start = end;
            }
        }
        out.counts.push(counts);
        out.change_start.push(out.changes.len());
        std::mem::swap(&mut prev, &mut cur);
    }
    out
}

/// Mean of `quantity` over the zone's ice-free cells, every year, fraction or index.
/// Values are linear in time between cover keyframes, so per keyframe pair the sums of both
/// frames' values over the ice-free cells are kept and corrected as cells change.
fn plant_means(
    timeline: &Timeline,
    zone: &Zone,
    stages: &StageSeries,
    quantity: PlantQuantity,
) -> Vec<Option<f64>> {
    let n = timeline.n_cells();
    let start = timeline.start_year();
    let keyframes = timeline.cover_keyframe_years();
    let fill = |year: i32, grid: &mut Vec<u8>| {
        grid.resize(n, 0);
        // At a keyframe year the value is the stored step, a whole number. Only zone cells
        // are read later, so a small zone fills only its own.
        if zone.is_small() {
            for idx in zone.cells() {
                let v = timeline.plant_value_at(idx, year, quantity).unwrap_or(0.0);
                grid[idx] = (v * 255.0 + 0.5) as u8;
            }
        } else {
            timeline.for_each_plant_value(year, quantity, |idx, v| grid[idx] = (v + 0.5) as u8);
        }
    };
    let mut free = stages.free_at_start.clone();
    let n_free_of = |k: usize| zone.n_cells - stages.counts[k][0];
    let mean = |sum: f64, k: usize| {
        let n_free = n_free_of(k);
        (n_free > 0).then(|| sum / 255.0 / n_free as f64)
    };
    let (mut frame_a, mut frame_b) = (Vec::new(), Vec::new());
    fill(start, &mut frame_a);
    let sum_over_free = |frame: &[u8], free: &[bool]| -> u64 {
        zone.spans
            .iter()
            .map(|&(a, b)| {
                frame[a..b]
                    .iter()
                    .zip(&free[a..b])
                    .map(|(&v, &f)| u64::from(v) * u64::from(f))
                    .sum::<u64>()
            })
            .sum()
    };
    let mut out = vec![mean(sum_over_free(&frame_a, &free) as f64, 0)];
    for pair in keyframes.windows(2) {
        let (year_a, year_b) = (pair[0], pair[1]);
        fill(year_b, &mut frame_b);
        let mut sum_a = sum_over_free(&frame_a, &free) as i64;
        let mut sum_b = sum_over_free(&frame_b, &free) as i64;
        for year in year_a + 1..=year_b {
            let k = (year - start) as usize;
            for &(idx, now_free) in
                &stages.changes[stages.change_start[k]..stages.change_start[k + 1]]
            {
                free[idx] = now_free;
                let sign = if now_free { 1 } else { -1 };
                sum_a += sign * i64::from(frame_a[idx]);
                sum_b += sign * i64::from(frame_b[idx]);
            }
            // The weight as the timeline interpolates.
            let w = f64::from((year - year_a) as f32 / (year_b - year_a) as f32);
            out.push(mean((1.0 - w) * sum_a as f64 + w * sum_b as f64, k));
        }
        std::mem::swap(&mut frame_a, &mut frame_b);
    }
    out
}

/// The zone's timeline through a recorded run.
pub fn zone_timeline(timeline: &Timeline, zone: &Zone) -> Result<ZoneTimeline, ExportError> {
    if timeline.n_cols() != zone.geometry.n_cols || timeline.n_rows() != zone.geometry.n_rows {
        return Err(ExportError::GridMismatch {
            run_cols: timeline.n_cols(),
            run_rows: timeline.n_rows(),
            dem_cols: zone.geometry.n_cols,
            dem_rows: zone.geometry.n_rows,
        });
    }
    let cell_km2 = zone.cell_km2();
    let ice = ice_series(timeline, zone);
    let years: Vec<i32> = (timeline.start_year()..=timeline.last_year()).collect();
    let half_reached = |count: usize| 2 * count >= zone.n_cells && zone.n_cells > 0;
    let mut key_years = vec![KeyYear {
        stage_code: 1,
        label: "ice-free".into(),
        year: years
            .iter()
            .zip(&ice.n_ice)
            .find(|&(_, &n_ice)| half_reached(zone.n_cells - n_ice))
            .map(|(&y, _)| y),
    }];
    let mut out = ZoneTimeline {
        name: zone.name.clone(),
        n_cells: zone.n_cells,
        cell_size_m: zone.geometry.cell_size_m,
        area_km2: zone.area_km2(),
        ice_area_km2: ice.n_ice.iter().map(|&n| n as f64 * cell_km2).collect(),
        ice_volume_km3: ice.volume_m3.iter().map(|&v| v / 1e9).collect(),
        newly_exposed_area_km2: ice
            .newly_exposed
            .iter()
            .map(|&n| n as f64 * cell_km2)
            .collect(),
        years,
        stage_names: Vec::new(),
        stage_area_km2: Vec::new(),
        type_names: timeline.type_names().to_vec(),
        mean_cover_pct: Vec::new(),
        mean_soil_index: Vec::new(),
        key_years: Vec::new(),
    };
    if timeline.has_plants() {
        let stages = stage_series(timeline, zone);
        out.stage_names = STAGE_PALETTE.iter().map(|s| s.0.to_string()).collect();
        out.stage_area_km2 = (0..STAGE_PALETTE.len())
            .map(|s| {
                stages
                    .counts
                    .iter()
                    .map(|c| c[s] as f64 * cell_km2)
                    .collect()
            })
            .collect();
        for (code, (label, _)) in STAGE_PALETTE.iter().enumerate().skip(2) {
            let year = out
                .years
                .iter()
                .zip(&stages.counts)
                .find(|(_, c)| half_reached(c[code..].iter().sum()))
                .map(|(&y, _)| y);
            key_years.push(KeyYear {
                stage_code: code as u8,
                label: label.to_string(),
                year,
            });
        }
        out.mean_cover_pct = (0..timeline.type_names().len())
            .map(|t| {
                plant_means(timeline, zone, &stages, PlantQuantity::Cover(t))
                    .into_iter()
                    .map(|m| m.map(|c| 100.0 * c))
                    .collect()
            })
            .collect();
        out.mean_soil_index = plant_means(timeline, zone, &stages, PlantQuantity::Soil);
    }
    out.key_years = key_years;
    Ok(out)
}

/// The zone's timeline as RFC 4180 CSV: the comment lines of every table, the zone and its
/// key years as comments, then one row a year: `year`, `zone_area_km2`, `ice_area_km2`,
/// `ice_volume_km3`, `newly_exposed_area_km2` and, for runs with plants, `area_<stage>_km2`
/// per stage, `mean_cover_<type>_pct` per type and `mean_soil_index` (the means over the
/// zone's ice-free cells, empty in a year without any). Areas 1e-6 km^2, volume 1e-8 km^3,
/// cover 0.001 %, soil 0.0001.
pub fn zone_timeline_csv(
    timeline: &Timeline,
    dem: &Grid,
    zone: &Zone,
    meta: &ExportMeta,
) -> Result<String, ExportError> {
    check_grid(timeline, dem)?;
    let zt = zone_timeline(timeline, zone)?;
    let mut csv = preamble(meta, "zone timeline");
    let g = &dem.geometry;
    let _ = write!(
        csv,
        "# zone: {}, {} cells of {} m, {:.6} km2; crs: {}{CRLF}",
        one_line(&zt.name),
        zt.n_cells,
        g.cell_size_m,
        zt.area_km2,
        g.epsg
            .map_or("not stated".to_string(), |c| format!("EPSG:{c}"))
    );
    for key in &zt.key_years {
        let what = if key.stage_code == 1 {
            "free of ice".to_string()
        } else {
            format!("at {} or a later stage", key.label)
        };
        let year = key
            .year
            .map_or("not within the run".to_string(), |y| y.to_string());
        let _ = write!(
            csv,
            "# first year at least half of the zone is {what}: {year}{CRLF}"
        );
    }
    let mut names: Vec<String> = [
        "year",
        "zone_area_km2",
        "ice_area_km2",
        "ice_volume_km3",
        "newly_exposed_area_km2",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    for label in &zt.stage_names {
        names.push(format!("area_{}_km2", column_word(label)));
    }
    for name in &zt.type_names {
        names.push(format!("mean_cover_{}_pct", column_word(name)));
    }
    if timeline.has_plants() {
        names.push("mean_soil_index".into());
    }
    csv.push_str(&header_row(&names));
    let optional =
        |v: Option<f64>, digits: usize| v.map_or(String::new(), |v| format!("{v:.digits$}"));
    for (k, year) in zt.years.iter().enumerate() {
        let _ = write!(
            csv,
            "{year},{:.6},{:.6},{:.8},{:.6}",
            zt.area_km2, zt.ice_area_km2[k], zt.ice_volume_km3[k], zt.newly_exposed_area_km2[k]
        );
        for areas in &zt.stage_area_km2 {
            let _ = write!(csv, ",{:.6}", areas[k]);
        }
        for covers in &zt.mean_cover_pct {
            let _ = write!(csv, ",{}", optional(covers[k], 3));
        }
        if let Some(soil) = zt.mean_soil_index.get(k) {
            let _ = write!(csv, ",{}", optional(*soil, 4));
        }
        csv.push_str(CRLF);
    }
    Ok(csv)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ice::exposure::ICE_COVER_THRESHOLD_M;
    use crate::run::recorder::TimelineRecorder;

    const N_COLS: usize = 8;
    const N_ROWS: usize = 6;

    fn geometry() -> GridGeometry {
        GridGeometry {
            n_cols: N_COLS,
            n_rows: N_ROWS,
            cell_size_m: 10.0,
            west_m: 1000.0,
            north_m: 2060.0,
            epsg: Some(32626),
        }
    }

    /// Ice thinning from the north-west, one cell melting out and coming back.
    fn thickness(y: i32) -> Vec<f32> {
        (0..N_COLS * N_ROWS)
            .map(|idx| {
                let (col, row) = (idx % N_COLS, idx / N_COLS);
                if idx == 40 {
                    return if (3..6).contains(&y) { 0.0 } else { 4.0 };
                }
                (60.0 - 6.0 * (col + row) as f32 - 7.0 * y as f32).max(0.0)
            })
            .collect()
    }

    fn stage(y: i32, h: &[f32]) -> Vec<u8> {
        h.iter()
            .enumerate()
            .map(|(idx, &h)| {
                if h >= ICE_COVER_THRESHOLD_M {
                    0
                } else {
                    (1 + (y as usize + idx) / 3).min(6) as u8
                }
            })
            .collect()
    }

    fn plants(y: i32) -> (Vec<f32>, Vec<f32>, Vec<f32>) {
        let herbs = (0..48).map(|i| ((y as f32 * 0.07) + 0.003 * i as f32).min(1.0));
        let trees = (0..48).map(|i| if i % 3 == 0 { 0.02 * y as f32 } else { 0.0 });
        let soil = (0..48).map(|i| (0.01 * i as f32 + 0.03 * y as f32).min(1.0));
        (herbs.collect(), trees.collect(), soil.collect())
    }

    /// A 12-year run; small budgets force keyframe intervals above one year.
    fn run(budgets: (usize, usize, usize)) -> Timeline {
        let n_years = 12;
        let (herbs, trees, soil) = plants(0);
        let h0 = thickness(0);
        let mut recorder = TimelineRecorder::new(N_COLS, 2000, n_years, &h0, budgets.0)
            .with_plants(
                vec!["herbs".into(), "Trees (tall)".into()],
                &stage(0, &h0),
                &[&herbs, &trees],
                &soil,
                budgets.1,
                budgets.2,
            );
        for y in 1..=n_years as i32 {
            let h = thickness(y);
            recorder.record_year(2000 + y, &h);
            let (herbs, trees, soil) = plants(y);
            recorder.record_plants(2000 + y, &stage(y, &h), &[&herbs, &trees], &soil);
        }
        let (herbs, trees, soil) = plants(n_years as i32);
        recorder.finish_with_plants(&thickness(n_years as i32), &[&herbs, &trees], &soil)
    }

    fn dem() -> Grid {
        let mut dem = Grid::filled(geometry(), 2000.0);
        dem.nodata[0] = true;
        dem
    }

    /// Columns 0-4, rows 0-4 (west 1000-1050, north 2060-2010): 25 cells less the nodata one.
    const RECT: &str = r#"{"type":"Feature","properties":{},"geometry":{"type":"Polygon",
        "coordinates":[[[1000,2010],[1050,2010],[1050,2060],[1000,2060],[1000,2010]]]}}"#;

    /// The same numbers cell by cell through the per-cell accessors.
    fn check_against_cells(timeline: &Timeline, zone: &Zone, zt: &ZoneTimeline) {
        let cells: Vec<usize> = zone.cells().collect();
        let cell_km2 = 100.0 / 1e6;
        for (k, &year) in zt.years.iter().enumerate() {
            let covered = |idx: usize, y: i32| timeline.cover_at(idx, y).0;
            let n_ice = cells.iter().filter(|&&i| covered(i, year)).count();
            assert_eq!(zt.ice_area_km2[k], n_ice as f64 * cell_km2, "year {year}");
            let volume: f64 = cells
                .iter()
                .map(|&i| f64::from(timeline.ice_thickness_at(i, year)) * 100.0 / 1e9)
                .sum();
            assert!(
                (zt.ice_volume_km3[k] - volume).abs() <= 1e-6 * volume,
                "year {year}: {} vs {volume}",
                zt.ice_volume_km3[k]
            );
            let exposed = if k == 0 {
                0
            } else {
                cells
                    .iter()
                    .filter(|&&i| covered(i, year - 1) && !covered(i, year))
                    .count()
            };
            assert_eq!(zt.newly_exposed_area_km2[k], exposed as f64 * cell_km2);
            let stages: Vec<u8> = cells
                .iter()
                .map(|&i| timeline.stage_history(i)[k])
                .collect();
            for code in 0..7u8 {
                let n = stages.iter().filter(|&&s| s == code).count();
                assert_eq!(zt.stage_area_km2[usize::from(code)][k], n as f64 * cell_km2);
            }
            let free: Vec<usize> = cells
                .iter()
                .zip(&stages)
                .filter(|(_, &s)| s != 0)
                .map(|(&i, _)| i)
                .collect();
            for (t, quantity) in [(0, PlantQuantity::Cover(0)), (1, PlantQuantity::Cover(1))] {
                let expected = (!free.is_empty()).then(|| {
                    100.0
                        * free
                            .iter()
                            .map(|&i| {
                                f64::from(timeline.plant_value_at(i, year, quantity).unwrap())
                            })
                            .sum::<f64>()
                        / free.len() as f64
                });
                let got = zt.mean_cover_pct[t][k];
                assert_eq!(got.is_some(), expected.is_some());
                if let (Some(g), Some(e)) = (got, expected) {
                    assert!((g - e).abs() < 1e-4, "type {t} year {year}: {g} vs {e}");
                }
            }
        }
    }

    #[test]
    fn zone_numbers_match_the_cells_with_every_year_and_with_sparse_keyframes() {
        let dem = dem();
        let zone = Zone::from_geojson(RECT, "dir/north west.geojson", &dem).unwrap();
        assert_eq!(zone.n_cells(), 24, "25 cells less the nodata corner");
        assert_eq!(zone.name(), "north west.geojson");
        assert_eq!(zone.csv_file_name(), "zone_north_west_timeline.csv");
        // Columns 3-4, rows 3-4 (the cell that melts out and returns is 40, row 5): small
        // beside the grid, so read cell by cell.
        let small = r#"{"type":"Polygon","coordinates":[[[1030,2010],[1050,2010],[1050,2030],[1030,2030],[1030,2010]]]}"#;
        let small = Zone::from_geojson(small, "small.geojson", &dem).unwrap();
        assert!(small.is_small() && !zone.is_small());
        let mut tiny = vec![false; N_COLS * N_ROWS];
        tiny[40] = true;
        tiny[41] = true;
        let tiny = Zone::from_mask(&tiny, &geometry(), "tiny");
        for budgets in [(1 << 20, 1 << 20, 1 << 20), (2 * 96, 3 * 48, 3 * 144)] {
            let timeline = run(budgets);
            for zone in [&zone, &small, &tiny] {
                let zt = zone_timeline(&timeline, zone).unwrap();
                assert_eq!(zt.years.len(), 13);
                check_against_cells(&timeline, zone, &zt);
            }
        }
        let sparse = run((2 * 96, 3 * 48, 3 * 144));
        let (s, c) = sparse.plant_intervals().unwrap();
        assert!(s > 1 && c > 1 && sparse.keyframe_interval() > 1);
    }

    #[test]
    fn key_years_are_the_first_with_half_the_zone_there() {
        let dem = dem();
        let timeline = run((1 << 20, 1 << 20, 1 << 20));
        let zone = Zone::from_geojson(RECT, "z.geojson", &dem).unwrap();
        let zt = zone_timeline(&timeline, &zone).unwrap();
        let cells: Vec<usize> = zone.cells().collect();
        let histories: Vec<Vec<u8>> = cells.iter().map(|&i| timeline.stage_history(i)).collect();
        for key in &zt.key_years {
            // Independently, from each cell's own stage history.
            let expected = (0..zt.years.len()).find(|&k| {
                let there = if key.stage_code == 1 {
                    cells
                        .iter()
                        .filter(|&&i| !timeline.cover_at(i, zt.years[k]).0)
                        .count()
                } else {
                    histories.iter().filter(|h| h[k] >= key.stage_code).count()
                };
                2 * there >= cells.len()
            });
            assert_eq!(key.year, expected.map(|k| zt.years[k]), "{}", key.label);
        }
        assert_eq!(zt.key_years.len(), 6);
        assert!(zt.key_years[0].year.is_some());
    }

    #[test]
    fn csv_has_the_preamble_units_and_one_row_a_year() {
        let dem = dem();
        let timeline = run((1 << 20, 1 << 20, 1 << 20));
        let zone = Zone::from_geojson(RECT, "z.geojson", &dem).unwrap();
        let meta = ExportMeta {
            scenario_name: "test, \"quoted\"".into(),
            seed: 7,
            engine_version: "0.0.0",
            run_notes: Vec::new(),
        };
        let csv = zone_timeline_csv(&timeline, &dem, &zone, &meta).unwrap();
        assert!(csv.contains("# caution: "));
        assert!(csv.contains("# zone: z.geojson, 24 cells of 10 m"));
        let lines: Vec<&str> = csv.split("\r\n").collect();
        assert_eq!(lines.last(), Some(&""), "ends in CRLF");
        assert!(!csv.replace("\r\n", "").contains('\n'), "no bare LF");
        let header = lines.iter().find(|l| !l.starts_with('#')).unwrap();
        assert!(header.starts_with("year,zone_area_km2,ice_area_km2,ice_volume_km3,"));
        assert!(header.contains(
            "area_mature_forest_km2,mean_cover_herbs_pct,mean_cover_trees_tall_pct,mean_soil_index"
        ));
        let n_fields = header.split(',').count();
        let rows: Vec<&&str> = lines
            .iter()
            .skip_while(|l| l.starts_with('#'))
            .skip(1)
            .filter(|l| !l.is_empty())
            .collect();
        assert_eq!(rows.len(), 13);
        assert!(rows.iter().all(|r| r.split(',').count() == n_fields));
        assert!(rows[0].starts_with("2000,0.002400,"));
    }

    #[test]
    fn nodata_only_and_degree_zones_are_refused_naming_the_file() {
        let dem = dem();
        let corner = r#"{"type":"Polygon","coordinates":[[[1000,2050],[1010,2050],[1010,2060],[1000,2060],[1000,2050]]]}"#;
        let err = Zone::from_geojson(corner, "corner.geojson", &dem).unwrap_err();
        assert!(matches!(err, ZoneError::OnlyNodata { .. }));
        assert!(err.to_string().contains("corner.geojson"));
        let degrees =
            r#"{"type":"Polygon","coordinates":[[[-30,40],[-29.9,40],[-29.9,40.1],[-30,40]]]}"#;
        let err = Zone::from_geojson(degrees, "deg.geojson", &dem).unwrap_err();
        assert!(err.to_string().starts_with("deg.geojson: "), "{err}");
    }

    #[test]
    fn ice_only_runs_give_ice_columns_and_the_ice_free_year() {
        let h0 = thickness(0);
        let mut recorder = TimelineRecorder::new(N_COLS, 2000, 12, &h0, 1 << 20);
        for y in 1..=12 {
            recorder.record_year(2000 + y, &thickness(y));
        }
        let timeline = recorder.finish(&thickness(12));
        let dem = dem();
        let zone = Zone::from_geojson(RECT, "z.geojson", &dem).unwrap();
        let zt = zone_timeline(&timeline, &zone).unwrap();
        assert!(zt.stage_area_km2.is_empty() && zt.mean_soil_index.is_empty());
        assert_eq!(zt.key_years.len(), 1);
        let csv = zone_timeline_csv(
            &timeline,
            &dem,
            &zone,
            &ExportMeta {
                scenario_name: "s".into(),
                seed: 0,
                engine_version: "0",
                run_notes: Vec::new(),
            },
        )
        .unwrap();
        assert!(csv.contains(
            "\r\nyear,zone_area_km2,ice_area_km2,ice_volume_km3,newly_exposed_area_km2\r\n"
        ));
    }
}
