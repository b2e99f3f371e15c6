//! Timeline store: every simulated year viewable without a re-run, from exact cover events per
//! cell plus ice thickness quantised to 16 bits at keyframe years (own design).
//!
//! What is exact and what is interpolated:
//!
//! - **Ice cover** (thickness at least [`ICE_COVER_THRESHOLD_M`]) is exact for every year: each
//!   cell stores whether it started under ice and the years its cover toggled (became ice-free,
//!   was covered again). Nearly every cell toggles at most once, so the first toggle is kept in
//!   a `u16` per cell and later toggles in a short side list.
//! - **Exposure year** as of any year Y follows from the same toggles: the latest toggle to
//!   ice-free at or before Y.
//! - **Ice thickness** is kept at keyframe years (the start, every `keyframe_interval` years,
//!   and the last year), in steps of [`THICKNESS_STEP_M`], inside each frame's bounding box of
//!   ice. Between keyframes it is interpolated linearly in time, and the exact cover decides
//!   whether a cell shows ice at all. The interval is chosen at the start so that the frames
//!   fit a memory budget; on the 400 x 400 sample it is one year (every year stored).
//!
//! - **Succession stage** (when the run has plants) is exact for every year: a full `u8` grid
//!   at stage keyframes plus, for every year, the list of cells whose stage changed
//!   (5 bytes each). A year is its keyframe with at most one interval of changes applied.
//! - **Cover of each plant type** and the **soil index** are kept at cover keyframes in
//!   steps of 1/255 (one byte per cell and type) and interpolated linearly between them.
//!
//! Memory: 3 bytes per cell for cover events plus 2 bytes per cell inside the ice box per
//! keyframe; with plants, 1 byte per cell per stage keyframe, 5 bytes per stage change, and
//! `n_types + 1` bytes per cell per cover keyframe. Each kind of keyframe has its own budget,
//! which sets its interval. [`Timeline::memory_bytes`] gives the figure for a run.
//!
//! The whole store travels between threads as one byte string ([`Timeline::to_bytes`],
//! [`Timeline::from_bytes`]): a worker records, the page renders.

use thiserror::Error;

use crate::ice::exposure::ICE_COVER_THRESHOLD_M;

/// Quantisation step of stored ice thickness, m: 0.05 m keeps 0 to 3276 m in a `u16`, beyond
/// the 2000 m the ice model accepts.
pub const THICKNESS_STEP_M: f32 = 0.05;

/// Default memory budget for thickness keyframes, bytes (32 MiB: small beside a browser tab's
/// typical limit of several GiB, and copied once between worker and page).
pub const DEFAULT_FRAME_BUDGET_BYTES: usize = 32 << 20;

/// Default budget for stage keyframes, bytes (8 MiB: every 25 years or closer for 200 years
/// of 1M cells).
pub const DEFAULT_STAGE_BUDGET_BYTES: usize = 8 << 20;

/// Default budget for cover and soil keyframes, bytes (48 MiB: five plant types and soil on
/// 1M cells give 8 keyframes).
pub const DEFAULT_COVER_BUDGET_BYTES: usize = 48 << 20;

const MAGIC: &[u8; 8] = b"FFTLINE3";

/// Per-cell flag: the cell was ice-covered at the start.
const FLAG_COVERED_AT_START: u8 = 1;
/// Per-cell flag: the cell has toggles beyond the first, in `later_toggles`.
const FLAG_MORE_TOGGLES: u8 = 2;
/// `first_toggle` value of a cell whose cover never changed.
const NO_TOGGLE: u16 = u16::MAX;

/// A timeline byte string that cannot be read.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum TimelineError {
    #[error("timeline data is not in this engine's format")]
    BadMagic,
    #[error("timeline data ends early (needed {needed} bytes at offset {offset})")]
    Truncated { offset: usize, needed: usize },
    #[error("timeline data is inconsistent: {0}")]
    Inconsistent(&'static str),
}

/// Ice thickness of one keyframe year inside a box of cells; thickness is zero outside it.
#[derive(Clone, Debug, PartialEq)]
struct Frame {
    year: i32,
    col0: u32,
    row0: u32,
    width: u32,
    height: u32,
    /// Thickness in units of [`THICKNESS_STEP_M`], row-major over the box.
    thickness_q: Vec<u16>,
}

impl Frame {
    fn from_thickness(year: i32, n_cols: usize, thickness_m: &[f32]) -> Frame {
        let n_rows = thickness_m.len() / n_cols.max(1);
        let (mut c0, mut r0, mut c1, mut r1) = (usize::MAX, usize::MAX, 0, 0);
        for (idx, &h) in thickness_m.iter().enumerate() {
            if h > 0.0 {
                let (row, col) = (idx / n_cols, idx % n_cols);
                c0 = c0.min(col);
                c1 = c1.max(col);
                r0 = r0.min(row);
                r1 = r1.max(row);
            }
        }
        if c0 == usize::MAX || n_rows == 0 {
            return Frame {
                year,
                col0: 0,
                row0: 0,
                width: 0,
                height: 0,
                thickness_q: Vec::new(),
            };
        }
        let (width, height) = (c1 - c0 + 1, r1 - r0 + 1);
        let mut thickness_q = Vec::with_capacity(width * height);
        for row in r0..=r1 {
            let line = &thickness_m[row * n_cols + c0..=row * n_cols + c1];
            thickness_q.extend(line.iter().map(|&h| quantise(h)));
        }
        Frame {
            year,
            col0: c0 as u32,
            row0: r0 as u32,
            width: width as u32,
            height: height as u32,
            thickness_q,
        }
    }

    fn thickness_q(&self, col: usize, row: usize) -> u16 {
        let (c, r) = (
            col.wrapping_sub(self.col0 as usize),
            row.wrapping_sub(self.row0 as usize),
        );
        if c < self.width as usize && r < self.height as usize {
            self.thickness_q[r * self.width as usize + c]
        } else {
            0
        }
    }
}

/// Smallest box (first col, first row, end col, end row) holding both frames' boxes.
fn union_box(a: &Frame, b: &Frame) -> (usize, usize, usize, usize) {
    let boxes = [a, b].map(|f| {
        (
            f.col0 as usize,
            f.row0 as usize,
            (f.col0 + f.width) as usize,
            (f.row0 + f.height) as usize,
        )
    });
    let present: Vec<_> = boxes.iter().filter(|b| b.2 > b.0 && b.3 > b.1).collect();
    match present.as_slice() {
        [] => (0, 0, 0, 0),
        [x] => **x,
        [x, y, ..] => (x.0.min(y.0), x.1.min(y.1), x.2.max(y.2), x.3.max(y.3)),
    }
}

fn quantise(h: f32) -> u16 {
    if h.is_finite() && h > 0.0 {
        (h / THICKNESS_STEP_M).round().min(f32::from(u16::MAX)) as u16
    } else {
        0
    }
}

/// The recorded run: cover events per cell and thickness keyframes.
#[derive(Clone, Debug, PartialEq)]
pub struct Timeline {
    n_cols: usize,
    n_rows: usize,
    start_year: i32,
    /// Last recorded year.
    last_year: i32,
    keyframe_interval: u32,
    frames: Vec<Frame>,
    flags: Vec<u8>,
    /// Years since the start of each cell's first cover toggle, or [`NO_TOGGLE`].
    first_toggle: Vec<u16>,
    /// Second and later toggles, sorted by cell then year: (cell index, years since start).
    later_toggles: Vec<(u32, u16)>,
    /// Largest stored thickness (quantised), kept so a draw need not scan the frames.
    max_thickness_q: u16,
    /// Stages, covers and soil, when the run had plants.
    plants: Option<PlantTrack>,
    /// The exact bed, the glacier domain and how the run's ice was set up, when recorded.
    start: Option<RunStart>,
}

/// What a run started from beyond the ice: the bed exactly (the starting ice may have
/// relaxed, so the DEM less the starting ice is not the bed), the glacier domain and one line
/// per start-up step (ELA calibration, relaxation), for the page and export provenance.
#[derive(Clone, Debug, PartialEq)]
pub struct RunStart {
    pub bed_m: Vec<f32>,
    pub domain: Vec<bool>,
    pub notes: Vec<String>,
}

/// Succession stage, cover and soil of a run with plants.
#[derive(Clone, Debug, PartialEq)]
struct PlantTrack {
    type_names: Vec<String>,
    stage_interval: u32,
    /// Full stage grids at keyframe years, in year order; the first is the start.
    stage_frames: Vec<(i32, Vec<u8>)>,
    /// `changes[change_start[k]..change_start[k + 1]]` are the stage changes of year
    /// `start_year + 1 + k`: (cell index, new stage).
    change_start: Vec<u32>,
    changes: Vec<(u32, u8)>,
    cover_interval: u32,
    cover_frames: Vec<CoverFrame>,
}

/// Cover of every type (type-major) and soil index of one keyframe year, in 1/255 steps.
#[derive(Clone, Debug, PartialEq)]
struct CoverFrame {
    year: i32,
    cover_q: Vec<u8>,
    soil_q: Vec<u8>,
}

impl CoverFrame {
    fn new(year: i32, covers: &[&[f32]], soil: &[f32]) -> CoverFrame {
        let mut cover_q = Vec::with_capacity(covers.len() * soil.len());
        for cover in covers {
            cover_q.extend(cover.iter().map(|&c| quantise_unit(c)));
        }
        CoverFrame {
            year,
            cover_q,
            soil_q: soil.iter().map(|&s| quantise_unit(s)).collect(),
        }
    }
}

/// A value in [0, 1] to 1/255 steps.
fn quantise_unit(v: f32) -> u8 {
    if v.is_finite() {
        (v.clamp(0.0, 1.0) * 255.0).round() as u8
    } else {
        0
    }
}

/// Smallest keyframe interval that keeps the frames of `n_years` inside `budget_bytes`.
fn keyframe_interval_for(n_years: u32, frame_bytes: usize, budget_bytes: usize) -> u32 {
    let frames_in_budget = (budget_bytes / frame_bytes.max(1)).max(2);
    if (n_years as usize) < frames_in_budget {
        1
    } else {
        (n_years as usize).div_ceil(frames_in_budget - 1).max(1) as u32
    }
}

/// A plant quantity stored at cover keyframes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PlantQuantity {
    /// Cover of one plant type (index), fraction.
    Cover(usize),
    /// Soil development index.
    Soil,
}

fn max_q(frames: &[Frame]) -> u16 {
    frames
        .iter()
        .flat_map(|f| f.thickness_q.iter())
        .copied()
        .max()
        .unwrap_or(0)
}

/// Records a run year by year into a [`Timeline`].
#[derive(Clone, Debug)]
pub struct TimelineRecorder {
    timeline: Timeline,
    end_year: i32,
    covered_now: Vec<bool>,
    /// Stage of each cell as last recorded, when recording plants.
    stage_now: Vec<u8>,
}

impl TimelineRecorder {
    /// Starts from the thickness at the end of `start_year`; the keyframe interval is the
    /// smallest that keeps `n_years + 1` frames of this size inside `frame_budget_bytes`.
    pub fn new(
        n_cols: usize,
        start_year: i32,
        n_years: u32,
        ice_thickness_m: &[f32],
        frame_budget_bytes: usize,
    ) -> TimelineRecorder {
        let n_cells = ice_thickness_m.len();
        let n_rows = n_cells / n_cols.max(1);
        let first = Frame::from_thickness(start_year, n_cols, ice_thickness_m);
        let frame_bytes = (first.thickness_q.len() * 2).max(1);
        let frames_in_budget = (frame_budget_bytes / frame_bytes).max(2);
        let needed = n_years as usize + 1;
        let keyframe_interval = if needed <= frames_in_budget {
            1
        } else {
            (n_years as usize).div_ceil(frames_in_budget - 1) as u32
        };
        let covered_now: Vec<bool> = ice_thickness_m
            .iter()
            .map(|&h| h >= ICE_COVER_THRESHOLD_M)
            .collect();
        let flags = covered_now
            .iter()
            .map(|&c| if c { FLAG_COVERED_AT_START } else { 0 })
            .collect();
        TimelineRecorder {
            timeline: Timeline {
                n_cols,
                n_rows,
                start_year,
                last_year: start_year,
                keyframe_interval: keyframe_interval.max(1),
                frames: vec![first],
                flags,
                first_toggle: vec![NO_TOGGLE; n_cells],
                later_toggles: Vec::new(),
                max_thickness_q: 0,
                plants: None,
                start: None,
            },
            end_year: start_year + n_years as i32,
            covered_now,
            stage_now: Vec::new(),
        }
    }

    /// Records plants too, from their start state: stage codes, the cover of each type
    /// (named in `type_names`) and the soil index, each one value per cell. Keyframe
    /// intervals follow from the two budgets.
    pub fn with_plants(
        mut self,
        type_names: Vec<String>,
        stage: &[u8],
        covers: &[&[f32]],
        soil: &[f32],
        stage_budget_bytes: usize,
        cover_budget_bytes: usize,
    ) -> TimelineRecorder {
        let n_years = (self.end_year - self.timeline.start_year).max(0) as u32;
        let n_cells = stage.len();
        let start = self.timeline.start_year;
        self.timeline.plants = Some(PlantTrack {
            stage_interval: keyframe_interval_for(n_years, n_cells, stage_budget_bytes),
            cover_interval: keyframe_interval_for(
                n_years,
                n_cells * (covers.len() + 1),
                cover_budget_bytes,
            ),
            type_names,
            stage_frames: vec![(start, stage.to_vec())],
            change_start: vec![0],
            changes: Vec::new(),
            cover_frames: vec![CoverFrame::new(start, covers, soil)],
        });
        self.stage_now = stage.to_vec();
        self
    }

    /// Keeps the run's exact bed, glacier domain and start-up notes (one value per cell).
    pub fn with_start(mut self, start: RunStart) -> TimelineRecorder {
        self.timeline.start = Some(start);
        self
    }

    /// Adds lines to the run's notes (warnings found during the run).
    pub fn add_notes(&mut self, notes: Vec<String>) {
        if let Some(start) = self.timeline.start.as_mut() {
            start.notes.extend(notes);
        }
    }

    /// Records the plants at the end of `year`, the year of the last [`Self::record_year`].
    pub fn record_plants(&mut self, year: i32, stage: &[u8], covers: &[&[f32]], soil: &[f32]) {
        let start = self.timeline.start_year;
        let end_year = self.end_year;
        let Some(plants) = self.timeline.plants.as_mut() else {
            return;
        };
        for (idx, (now, &new)) in self.stage_now.iter_mut().zip(stage).enumerate() {
            if *now != new {
                *now = new;
                plants.changes.push((idx as u32, new));
            }
        }
        plants.change_start.push(plants.changes.len() as u32);
        let since_start = (year - start) as u32;
        if since_start % plants.stage_interval == 0 {
            plants.stage_frames.push((year, stage.to_vec()));
        }
        if since_start % plants.cover_interval == 0 || year >= end_year {
            plants
                .cover_frames
                .push(CoverFrame::new(year, covers, soil));
        }
    }

    /// As [`Self::finish`], first keeping the plants' present covers as the last cover
    /// keyframe if the run stopped before one.
    pub fn finish_with_plants(
        mut self,
        ice_thickness_m: &[f32],
        covers: &[&[f32]],
        soil: &[f32],
    ) -> Timeline {
        let last_year = self.timeline.last_year;
        if let Some(plants) = self.timeline.plants.as_mut() {
            if plants.cover_frames.last().map(|f| f.year) != Some(last_year) {
                plants
                    .cover_frames
                    .push(CoverFrame::new(last_year, covers, soil));
            }
        }
        self.finish(ice_thickness_m)
    }

    /// Records the thickness at the end of `year` (the year after the last one recorded).
    pub fn record_year(&mut self, year: i32, ice_thickness_m: &[f32]) {
        let timeline = &mut self.timeline;
        let offset = (year - timeline.start_year).clamp(0, i32::from(u16::MAX - 1)) as u16;
        for (idx, (covered, &h)) in self.covered_now.iter_mut().zip(ice_thickness_m).enumerate() {
            let now = h >= ICE_COVER_THRESHOLD_M;
            if now != *covered {
                *covered = now;
                if timeline.first_toggle[idx] == NO_TOGGLE {
                    timeline.first_toggle[idx] = offset;
                } else {
                    timeline.flags[idx] |= FLAG_MORE_TOGGLES;
                    timeline.later_toggles.push((idx as u32, offset));
                }
            }
        }
        timeline.last_year = year;
        let since_start = (year - timeline.start_year) as u32;
        if since_start % timeline.keyframe_interval == 0 || year >= self.end_year {
            timeline.frames.push(Frame::from_thickness(
                year,
                timeline.n_cols,
                ice_thickness_m,
            ));
        }
    }

    /// The timeline so far. The last recorded year is made a keyframe if it is not one
    /// (a cancelled or shortened run stays viewable to where it got).
    pub fn finish(mut self, ice_thickness_m: &[f32]) -> Timeline {
        let timeline = &mut self.timeline;
        if timeline.frames.last().map(|f| f.year) != Some(timeline.last_year) {
            timeline.frames.push(Frame::from_thickness(
                timeline.last_year,
                timeline.n_cols,
                ice_thickness_m,
            ));
        }
        // Pushed in year order per cell, but cells interleave across years.
        timeline.later_toggles.sort_unstable();
        timeline.max_thickness_q = max_q(&timeline.frames);
        self.timeline
    }

    pub fn keyframe_interval(&self) -> u32 {
        self.timeline.keyframe_interval
    }
}

/// Bytes a plant track holds.
fn plant_memory_bytes(plants: &PlantTrack) -> usize {
    plants
        .stage_frames
        .iter()
        .map(|f| f.1.len() + 4)
        .sum::<usize>()
        + 4 * plants.change_start.len()
        + 5 * plants.changes.len()
        + plants
            .cover_frames
            .iter()
            .map(|f| f.cover_q.len() + f.soil_q.len() + 4)
            .sum::<usize>()
}

impl Timeline {
    pub fn n_cols(&self) -> usize {
        self.n_cols
    }

    pub fn n_rows(&self) -> usize {
        self.n_rows
    }

    pub fn n_cells(&self) -> usize {
        self.n_cols * self.n_rows
    }

    pub fn start_year(&self) -> i32 {
        self.start_year
    }

    pub fn last_year(&self) -> i32 {
        self.last_year
    }

    pub fn keyframe_interval(&self) -> u32 {
        self.keyframe_interval
    }

    /// Years that hold a thickness keyframe.
    pub fn keyframe_years(&self) -> Vec<i32> {
        self.frames.iter().map(|f| f.year).collect()
    }

    /// Bytes held by the store (the figure the page reports).
    pub fn memory_bytes(&self) -> usize {
        self.flags.len()
            + 2 * self.first_toggle.len()
            + 6 * self.later_toggles.len()
            + self
                .frames
                .iter()
                .map(|f| 2 * f.thickness_q.len() + 20)
                .sum::<usize>()
            + self.plants.as_ref().map_or(0, plant_memory_bytes)
            + self.start.as_ref().map_or(0, |s| {
                5 * s.bed_m.len() + s.notes.iter().map(String::len).sum::<usize>()
            })
    }

    /// The run's exact bed, glacier domain and start-up notes, when recorded.
    pub fn run_start(&self) -> Option<&RunStart> {
        self.start.as_ref()
    }

    /// Bytes held for stages, covers and soil (zero without plants).
    pub fn plant_memory_bytes(&self) -> usize {
        self.plants.as_ref().map_or(0, plant_memory_bytes)
    }

    /// Whether the run recorded plants.
    pub fn has_plants(&self) -> bool {
        self.plants.is_some()
    }

    /// Names of the recorded plant types (empty without plants).
    pub fn type_names(&self) -> &[String] {
        self.plants.as_ref().map_or(&[], |p| &p.type_names)
    }

    /// Stage keyframe interval and cover keyframe interval, years (`None` without plants).
    pub fn plant_intervals(&self) -> Option<(u32, u32)> {
        self.plants
            .as_ref()
            .map(|p| (p.stage_interval, p.cover_interval))
    }

    /// Fills `stage` (resized to the grid) with each cell's succession stage at the end of
    /// `year`: the stage keyframe at or before it and the changes since. Without plants every
    /// cell reads 0 under ice and 1 elsewhere.
    pub fn fill_stage(&self, year: i32, stage: &mut Vec<u8>) {
        let year = self.clamp_year(year);
        stage.clear();
        let Some(plants) = self.plants.as_ref() else {
            stage.extend((0..self.n_cells()).map(
                |idx| {
                    if self.cover_at(idx, year).0 {
                        0
                    } else {
                        1
                    }
                },
            ));
            return;
        };
        let frame_idx = plants.stage_frames.partition_point(|f| f.0 <= year) - 1;
        let (frame_year, frame) = &plants.stage_frames[frame_idx];
        stage.extend_from_slice(frame);
        let (from, to) = (
            (frame_year - self.start_year) as usize,
            (year - self.start_year) as usize,
        );
        let last = plants.change_start.len() - 1;
        let lo = plants.change_start[from.min(last)] as usize;
        let hi = plants.change_start[to.min(last)] as usize;
        for &(cell, new) in &plants.changes[lo..hi] {
            stage[cell as usize] = new;
        }
    }

    /// Stage of one cell for every recorded year, start first.
    pub fn stage_history(&self, idx: usize) -> Vec<u8> {
        let n_years = (self.last_year - self.start_year) as usize + 1;
        let Some(plants) = self.plants.as_ref() else {
            return (self.start_year..=self.last_year)
                .map(|y| u8::from(!self.cover_at(idx, y).0))
                .collect();
        };
        let mut out = Vec::with_capacity(n_years);
        let mut now = plants.stage_frames[0].1[idx];
        out.push(now);
        for k in 0..n_years - 1 {
            let (Some(&lo), Some(&hi)) =
                (plants.change_start.get(k), plants.change_start.get(k + 1))
            else {
                out.push(now);
                continue;
            };
            let (lo, hi) = (lo as usize, hi as usize);
            if let Some(&(_, new)) = plants.changes[lo..hi]
                .iter()
                .find(|&&(cell, _)| cell as usize == idx)
            {
                now = new;
            }
            out.push(now);
        }
        out
    }

    /// The cover keyframes around `year` and the weight of the later one.
    fn cover_bracket(&self, year: i32) -> Option<(&CoverFrame, &CoverFrame, f32)> {
        let frames = &self.plants.as_ref()?.cover_frames;
        let year = self.clamp_year(year);
        let after = frames
            .partition_point(|f| f.year < year)
            .min(frames.len() - 1);
        let b = &frames[after];
        if b.year == year || after == 0 {
            return Some((b, b, 0.0));
        }
        let a = &frames[after - 1];
        Some((a, b, (year - a.year) as f32 / (b.year - a.year) as f32))
    }

    fn quantity_slice<'a>(&self, frame: &'a CoverFrame, quantity: PlantQuantity) -> &'a [u8] {
        let n = self.n_cells();
        match quantity {
            PlantQuantity::Cover(t) => frame.cover_q.get(t * n..(t + 1) * n).unwrap_or(&[]),
            PlantQuantity::Soil => &frame.soil_q,
        }
    }

    /// Calls `visit(cell index, value in 1/255 steps)` for every cell with `quantity` at the
    /// end of `year`, interpolated between cover keyframes; nothing without plants or for a
    /// type that was not recorded.
    #[inline]
    pub fn for_each_plant_value(
        &self,
        year: i32,
        quantity: PlantQuantity,
        mut visit: impl FnMut(usize, f32),
    ) {
        let Some((a, b, w)) = self.cover_bracket(year) else {
            return;
        };
        let (qa, qb) = (
            self.quantity_slice(a, quantity),
            self.quantity_slice(b, quantity),
        );
        if qa.len() != self.n_cells() || qb.len() != self.n_cells() {
            return;
        }
        for (idx, (&va, &vb)) in qa.iter().zip(qb).enumerate() {
            let (va, vb) = (f32::from(va), f32::from(vb));
            visit(idx, va + w * (vb - va));
        }
    }

    /// One cell's `quantity` (fraction or index, 0 to 1) at the end of `year`, as drawn.
    pub fn plant_value_at(&self, idx: usize, year: i32, quantity: PlantQuantity) -> Option<f32> {
        let (a, b, w) = self.cover_bracket(year)?;
        let va = f32::from(*self.quantity_slice(a, quantity).get(idx)?);
        let vb = f32::from(*self.quantity_slice(b, quantity).get(idx)?);
        Some((va + w * (vb - va)) / 255.0)
    }

    /// Years that hold a cover keyframe (empty without plants).
    pub fn cover_keyframe_years(&self) -> Vec<i32> {
        self.plants.as_ref().map_or(Vec::new(), |p| {
            p.cover_frames.iter().map(|f| f.year).collect()
        })
    }

    /// Largest stored thickness over all keyframes, m.
    pub fn max_thickness_m(&self) -> f32 {
        f32::from(self.max_thickness_q) * THICKNESS_STEP_M
    }

    fn clamp_year(&self, year: i32) -> i32 {
        year.clamp(self.start_year, self.last_year)
    }

    /// Later toggles of one cell (usually none).
    fn later_toggles_of(&self, idx: usize) -> &[(u32, u16)] {
        if self.flags[idx] & FLAG_MORE_TOGGLES == 0 {
            return &[];
        }
        let cell = idx as u32;
        let lo = self.later_toggles.partition_point(|&(c, _)| c < cell);
        let hi = self.later_toggles.partition_point(|&(c, _)| c <= cell);
        &self.later_toggles[lo..hi]
    }

    /// Cover state and the exposure year that holds at the end of `offset` years after the
    /// start: `(covered, latest year the cell became ice-free, if any)`.
    #[inline]
    fn cover_at_offset(&self, idx: usize, offset: u16) -> (bool, Option<i32>) {
        let mut covered = self.flags[idx] & FLAG_COVERED_AT_START != 0;
        let first = self.first_toggle[idx];
        if first == NO_TOGGLE || first > offset {
            return (covered, None);
        }
        covered = !covered;
        let mut exposed = (!covered).then_some(first);
        for &(_, toggle) in self.later_toggles_of(idx) {
            if toggle > offset {
                break;
            }
            covered = !covered;
            if !covered {
                exposed = Some(toggle);
            }
        }
        (covered, exposed.map(|o| self.start_year + i32::from(o)))
    }

    /// Whether the cell is ice-covered at the end of `year`, and the latest year it became
    /// ice-free at or before then (`None`: not exposed by then, or ice-free from the start).
    pub fn cover_at(&self, idx: usize, year: i32) -> (bool, Option<i32>) {
        let offset = (self.clamp_year(year) - self.start_year) as u16;
        self.cover_at_offset(idx, offset)
    }

    /// Whether the cell was ice-covered at the start.
    pub fn covered_at_start(&self, idx: usize) -> bool {
        self.flags[idx] & FLAG_COVERED_AT_START != 0
    }

    /// The keyframes around `year` and the weight of the later one.
    fn bracket(&self, year: i32) -> (&Frame, &Frame, f32) {
        let year = self.clamp_year(year);
        let after = self.frames.partition_point(|f| f.year < year);
        let after = after.min(self.frames.len() - 1);
        let b = &self.frames[after];
        if b.year == year || after == 0 {
            return (b, b, 0.0);
        }
        let a = &self.frames[after - 1];
        let w = (year - a.year) as f32 / (b.year - a.year) as f32;
        (a, b, w)
    }

    /// Ice thickness at one cell at the end of `year`, m: zero where the cell is ice-free, at
    /// least the cover threshold where it is covered.
    pub fn ice_thickness_at(&self, idx: usize, year: i32) -> f32 {
        let (covered, _) = self.cover_at(idx, year);
        if !covered {
            return 0.0;
        }
        let (col, row) = (idx % self.n_cols, idx / self.n_cols);
        let (a, b, w) = self.bracket(year);
        let ha = f32::from(a.thickness_q(col, row));
        let hb = f32::from(b.thickness_q(col, row));
        ((ha + w * (hb - ha)) * THICKNESS_STEP_M).max(ICE_COVER_THRESHOLD_M)
    }

    /// Fills `thickness_m` (resized to the grid) with the ice thickness at the end of `year`.
    /// Works frame box by frame box so a year costs one pass over the grid.
    pub fn fill_ice_thickness(&self, year: i32, thickness_m: &mut Vec<f32>) {
        let n = self.n_cells();
        thickness_m.clear();
        thickness_m.resize(n, 0.0);
        let (a, b, w) = self.bracket(year);
        for frame_weight in [(a, 1.0 - w), (b, w)] {
            let (frame, weight) = frame_weight;
            if weight == 0.0 || frame.width == 0 {
                continue;
            }
            let scale = weight * THICKNESS_STEP_M;
            let width = frame.width as usize;
            for (r, line) in frame.thickness_q.chunks_exact(width).enumerate() {
                let start = (frame.row0 as usize + r) * self.n_cols + frame.col0 as usize;
                for (out, &q) in thickness_m[start..start + width].iter_mut().zip(line) {
                    *out += f32::from(q) * scale;
                }
            }
        }
        let offset = (self.clamp_year(year) - self.start_year) as u16;
        for (idx, h) in thickness_m.iter_mut().enumerate() {
            let (covered, _) = self.cover_at_offset(idx, offset);
            *h = if covered {
                h.max(ICE_COVER_THRESHOLD_M)
            } else {
                0.0
            };
        }
    }

    /// Fills `exposed` (resized to the grid) with each cell's state at the end of `year`:
    /// the exposure year, or [`COVERED`] under ice, or [`NEVER_COVERED`] for ground that was
    /// ice-free from the start.
    pub fn fill_exposure(&self, year: i32, exposed: &mut Vec<i32>) {
        let n = self.n_cells();
        exposed.clear();
        exposed.resize(n, NEVER_COVERED);
        let offset = (self.clamp_year(year) - self.start_year) as u16;
        for (idx, out) in exposed.iter_mut().enumerate() {
            *out = match self.cover_at_offset(idx, offset) {
                (true, _) => COVERED,
                (false, Some(y)) => y,
                (false, None) => NEVER_COVERED,
            };
        }
    }

    /// Calls `visit(cell index, thickness m)` for every cell under ice at the end of `year`,
    /// with the thickness of [`Timeline::ice_thickness_at`]. Works through the keyframes' ice
    /// box, then checks only the toggle years of cells outside it (ice that came and went
    /// between two keyframes), so a late year with little ice is cheap: the map's draw path.
    #[inline]
    pub fn for_each_ice_cell(&self, year: i32, mut visit: impl FnMut(usize, f32)) {
        let (a, b, w) = self.bracket(year);
        let offset = (self.clamp_year(year) - self.start_year) as u16;
        let (c0, r0, c1, r1) = union_box(a, b);
        let (wa, wb) = ((1.0 - w) * THICKNESS_STEP_M, w * THICKNESS_STEP_M);
        for row in r0..r1 {
            for col in c0..c1 {
                let idx = row * self.n_cols + col;
                if self.flags[idx] & FLAG_COVERED_AT_START == 0
                    && self.first_toggle[idx] == NO_TOGGLE
                {
                    continue;
                }
                if !self.cover_at_offset(idx, offset).0 {
                    continue;
                }
                let h = f32::from(a.thickness_q(col, row)) * wa
                    + f32::from(b.thickness_q(col, row)) * wb;
                visit(idx, h.max(ICE_COVER_THRESHOLD_M));
            }
        }
        // Outside the box only cells whose cover changed can be under ice, at the threshold.
        for idx in 0..self.n_cells() {
            if self.first_toggle[idx] == NO_TOGGLE {
                continue;
            }
            let (row, col) = (idx / self.n_cols, idx % self.n_cols);
            if (r0..r1).contains(&row) && (c0..c1).contains(&col) {
                continue;
            }
            if self.cover_at_offset(idx, offset).0 {
                visit(idx, ICE_COVER_THRESHOLD_M);
            }
        }
    }

    /// Calls `visit(cell index, state)` for every cell that was ever under ice in the run,
    /// with the state at the end of `year` as in [`Timeline::fill_exposure`]; the other cells
    /// are ice-free from the start throughout.
    #[inline]
    pub fn for_each_glaciated_cell(&self, year: i32, mut visit: impl FnMut(usize, i32)) {
        let offset = (self.clamp_year(year) - self.start_year) as u16;
        for (idx, (&flags, &first)) in self.flags.iter().zip(&self.first_toggle).enumerate() {
            if flags & FLAG_COVERED_AT_START == 0 && first == NO_TOGGLE {
                continue;
            }
            visit(
                idx,
                match self.cover_at_offset(idx, offset) {
                    (true, _) => COVERED,
                    (false, Some(y)) => y,
                    (false, None) => NEVER_COVERED,
                },
            );
        }
    }

    /// The store as one byte string (little-endian), for handing between threads.
    pub fn to_bytes(&self) -> Vec<u8> {
        let mut out = Vec::with_capacity(self.memory_bytes() + 64);
        out.extend_from_slice(MAGIC);
        for v in [
            self.n_cols as u32,
            self.n_rows as u32,
            self.start_year as u32,
            self.last_year as u32,
            self.keyframe_interval,
            self.frames.len() as u32,
            self.later_toggles.len() as u32,
        ] {
            out.extend_from_slice(&v.to_le_bytes());
        }
        for f in &self.frames {
            for v in [f.year as u32, f.col0, f.row0, f.width, f.height] {
                out.extend_from_slice(&v.to_le_bytes());
            }
            for q in &f.thickness_q {
                out.extend_from_slice(&q.to_le_bytes());
            }
        }
        out.extend_from_slice(&self.flags);
        for t in &self.first_toggle {
            out.extend_from_slice(&t.to_le_bytes());
        }
        for (cell, t) in &self.later_toggles {
            out.extend_from_slice(&cell.to_le_bytes());
            out.extend_from_slice(&t.to_le_bytes());
        }
        match &self.plants {
            None => out.push(0),
            Some(plants) => {
                out.push(1);
                let put = |out: &mut Vec<u8>, v: u32| out.extend_from_slice(&v.to_le_bytes());
                put(&mut out, plants.type_names.len() as u32);
                for name in &plants.type_names {
                    put(&mut out, name.len() as u32);
                    out.extend_from_slice(name.as_bytes());
                }
                put(&mut out, plants.stage_interval);
                put(&mut out, plants.cover_interval);
                put(&mut out, plants.stage_frames.len() as u32);
                for (year, frame) in &plants.stage_frames {
                    put(&mut out, *year as u32);
                    out.extend_from_slice(frame);
                }
                put(&mut out, plants.change_start.len() as u32);
                for &c in &plants.change_start {
                    put(&mut out, c);
                }
                put(&mut out, plants.changes.len() as u32);
                for &(cell, stage) in &plants.changes {
                    put(&mut out, cell);
                    out.push(stage);
                }
                put(&mut out, plants.cover_frames.len() as u32);
                for frame in &plants.cover_frames {
                    put(&mut out, frame.year as u32);
                    out.extend_from_slice(&frame.cover_q);
                    out.extend_from_slice(&frame.soil_q);
                }
            }
        }
        match &self.start {
            None => out.push(0),
            Some(start) => {
                out.push(1);
                for z in &start.bed_m {
                    out.extend_from_slice(&z.to_le_bytes());
                }
                out.extend(start.domain.iter().map(|&d| u8::from(d)));
                out.extend_from_slice(&(start.notes.len() as u32).to_le_bytes());
                for note in &start.notes {
                    out.extend_from_slice(&(note.len() as u32).to_le_bytes());
                    out.extend_from_slice(note.as_bytes());
                }
            }
        }
        out
    }

    /// Reads [`Timeline::to_bytes`] output, checking every size against the header.
    pub fn from_bytes(bytes: &[u8]) -> Result<Timeline, TimelineError> {
        let mut reader = Reader { bytes, offset: 0 };
        if reader.take(MAGIC.len())? != MAGIC {
            return Err(TimelineError::BadMagic);
        }
        let n_cols = reader.u32()? as usize;
        let n_rows = reader.u32()? as usize;
        let start_year = reader.u32()? as i32;
        let last_year = reader.u32()? as i32;
        let keyframe_interval = reader.u32()?;
        let n_frames = reader.u32()? as usize;
        let n_later = reader.u32()? as usize;
        let n_cells = n_cols
            .checked_mul(n_rows)
            .filter(|&n| n <= crate::MAX_CELLS)
            .ok_or(TimelineError::Inconsistent("grid size"))?;
        if n_frames == 0 || last_year < start_year || keyframe_interval == 0 {
            return Err(TimelineError::Inconsistent("header"));
        }
        let mut frames = Vec::with_capacity(n_frames.min(4096));
        for _ in 0..n_frames {
            let year = reader.u32()? as i32;
            let (col0, row0, width, height) =
                (reader.u32()?, reader.u32()?, reader.u32()?, reader.u32()?);
            if col0 as usize + width as usize > n_cols || row0 as usize + height as usize > n_rows {
                return Err(TimelineError::Inconsistent("frame box outside the grid"));
            }
            let raw = reader.take(2 * width as usize * height as usize)?;
            let thickness_q = raw
                .chunks_exact(2)
                .map(|c| u16::from_le_bytes([c[0], c[1]]))
                .collect();
            frames.push(Frame {
                year,
                col0,
                row0,
                width,
                height,
                thickness_q,
            });
        }
        if frames.windows(2).any(|w| w[0].year >= w[1].year) {
            return Err(TimelineError::Inconsistent("keyframe years out of order"));
        }
        let flags = reader.take(n_cells)?.to_vec();
        let first_toggle = reader
            .take(2 * n_cells)?
            .chunks_exact(2)
            .map(|c| u16::from_le_bytes([c[0], c[1]]))
            .collect();
        let mut later_toggles = Vec::with_capacity(n_later.min(n_cells));
        for _ in 0..n_later {
            let cell = reader.u32()?;
            let raw = reader.take(2)?;
            if cell as usize >= n_cells {
                return Err(TimelineError::Inconsistent("toggle cell outside the grid"));
            }
            later_toggles.push((cell, u16::from_le_bytes([raw[0], raw[1]])));
        }
        let plants = match reader.take(1)?[0] {
            0 => None,
            1 => Some(read_plants(&mut reader, n_cells, start_year, last_year)?),
            _ => return Err(TimelineError::Inconsistent("plant flag")),
        };
        let start = match reader.take(1)?[0] {
            0 => None,
            1 => Some(read_start(&mut reader, n_cells)?),
            _ => return Err(TimelineError::Inconsistent("start flag")),
        };
        Ok(Timeline {
            plants,
            start,
            max_thickness_q: max_q(&frames),
            n_cols,
            n_rows,
            start_year,
            last_year,
            keyframe_interval,
            frames,
            flags,
            first_toggle,
            later_toggles,
        })
    }
}

/// Reads the start part of [`Timeline::to_bytes`] output.
fn read_start(reader: &mut Reader, n_cells: usize) -> Result<RunStart, TimelineError> {
    let bed_m = reader
        .take(4 * n_cells)?
        .chunks_exact(4)
        .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]))
        .collect();
    let domain = reader.take(n_cells)?.iter().map(|&d| d != 0).collect();
    let n_notes = reader.u32()? as usize;
    if n_notes > 64 {
        return Err(TimelineError::Inconsistent("start notes"));
    }
    let mut notes = Vec::with_capacity(n_notes);
    for _ in 0..n_notes {
        let len = reader.u32()? as usize;
        let text = std::str::from_utf8(reader.take(len)?)
            .map_err(|_| TimelineError::Inconsistent("start note text"))?;
        notes.push(text.to_string());
    }
    Ok(RunStart {
        bed_m,
        domain,
        notes,
    })
}

/// Reads the plant part of [`Timeline::to_bytes`] output.
fn read_plants(
    reader: &mut Reader,
    n_cells: usize,
    start_year: i32,
    last_year: i32,
) -> Result<PlantTrack, TimelineError> {
    let n_years = (last_year - start_year) as usize;
    let n_types = reader.u32()? as usize;
    if n_types > 64 {
        return Err(TimelineError::Inconsistent("number of plant types"));
    }
    let mut type_names = Vec::with_capacity(n_types);
    for _ in 0..n_types {
        let len = reader.u32()? as usize;
        let raw = reader.take(len)?;
        type_names.push(
            String::from_utf8(raw.to_vec())
                .map_err(|_| TimelineError::Inconsistent("plant type name"))?,
        );
    }
    let stage_interval = reader.u32()?;
    let cover_interval = reader.u32()?;
    if stage_interval == 0 || cover_interval == 0 {
        return Err(TimelineError::Inconsistent("plant keyframe interval"));
    }
    let n_stage_frames = reader.u32()? as usize;
    let mut stage_frames = Vec::with_capacity(n_stage_frames.min(4096));
    for _ in 0..n_stage_frames {
        let year = reader.u32()? as i32;
        stage_frames.push((year, reader.take(n_cells)?.to_vec()));
    }
    if stage_frames.first().map(|f| f.0) != Some(start_year)
        || stage_frames.windows(2).any(|w| w[0].0 >= w[1].0)
    {
        return Err(TimelineError::Inconsistent("stage keyframe years"));
    }
    let n_starts = reader.u32()? as usize;
    if n_starts == 0 || n_starts > n_years + 1 {
        return Err(TimelineError::Inconsistent("stage change index"));
    }
    let mut change_start = Vec::with_capacity(n_starts);
    for _ in 0..n_starts {
        change_start.push(reader.u32()?);
    }
    let n_changes = reader.u32()? as usize;
    if change_start.windows(2).any(|w| w[0] > w[1])
        || change_start[0] != 0
        || change_start[n_starts - 1] as usize != n_changes
    {
        return Err(TimelineError::Inconsistent("stage change index"));
    }
    let raw = reader.take(
        n_changes
            .checked_mul(5)
            .ok_or(TimelineError::Inconsistent("stage changes"))?,
    )?;
    let mut changes = Vec::with_capacity(n_changes);
    for c in raw.chunks_exact(5) {
        let cell = u32::from_le_bytes([c[0], c[1], c[2], c[3]]);
        if cell as usize >= n_cells {
            return Err(TimelineError::Inconsistent("stage change outside the grid"));
        }
        changes.push((cell, c[4]));
    }
    let n_cover_frames = reader.u32()? as usize;
    if n_cover_frames == 0 {
        return Err(TimelineError::Inconsistent("no cover keyframe"));
    }
    let mut cover_frames = Vec::with_capacity(n_cover_frames.min(4096));
    for _ in 0..n_cover_frames {
        let year = reader.u32()? as i32;
        let cover_q = reader.take(n_types * n_cells)?.to_vec();
        let soil_q = reader.take(n_cells)?.to_vec();
        cover_frames.push(CoverFrame {
            year,
            cover_q,
            soil_q,
        });
    }
    if cover_frames.windows(2).any(|w| w[0].year >= w[1].year) {
        return Err(TimelineError::Inconsistent(
            "cover keyframe years out of order",
        ));
    }
    Ok(PlantTrack {
        type_names,
        stage_interval,
        stage_frames,
        change_start,
        changes,
        cover_interval,
        cover_frames,
    })
}

/// Exposure marker: under ice in that year.
pub const COVERED: i32 = i32::MAX;
/// Exposure marker: ice-free from the start of the run.
pub const NEVER_COVERED: i32 = i32::MIN;

struct Reader<'a> {
    bytes: &'a [u8],
    offset: usize,
}

impl<'a> Reader<'a> {
    fn take(&mut self, n: usize) -> Result<&'a [u8], TimelineError> {
        let end = self
            .offset
            .checked_add(n)
            .filter(|&end| end <= self.bytes.len())
            .ok_or(TimelineError::Truncated {
                offset: self.offset,
                needed: n,
            })?;
        let slice = &self.bytes[self.offset..end];
        self.offset = end;
        Ok(slice)
    }

    fn u32(&mut self) -> Result<u32, TimelineError> {
        let raw = self.take(4)?;
        Ok(u32::from_le_bytes([raw[0], raw[1], raw[2], raw[3]]))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A 4 x 3 grid whose ice thins by 10 m a year from 35 m, with one cell that melts out
    /// and is covered again.
    fn thickness(year_offset: i32) -> Vec<f32> {
        let mut h = vec![0.0_f32; 12];
        for (idx, v) in h.iter_mut().enumerate().take(8) {
            *v = (35.0 - 10.0 * year_offset as f32 + idx as f32).max(0.0);
        }
        // Cell 11: ice-free, covered in year 2, free again in year 4.
        h[11] = if (2..4).contains(&year_offset) {
            5.0
        } else {
            0.0
        };
        h
    }

    fn record(n_years: u32, budget: usize) -> Timeline {
        let mut recorder = TimelineRecorder::new(4, 2000, n_years, &thickness(0), budget);
        for y in 1..=n_years as i32 {
            recorder.record_year(2000 + y, &thickness(y));
        }
        recorder.finish(&thickness(n_years as i32))
    }

    #[test]
    fn every_year_is_exact_when_the_budget_allows() {
        let timeline = record(5, DEFAULT_FRAME_BUDGET_BYTES);
        assert_eq!(timeline.keyframe_interval(), 1);
        for y in 0..=5 {
            let h = thickness(y);
            for (idx, &expected) in h.iter().enumerate() {
                let got = timeline.ice_thickness_at(idx, 2000 + y);
                let expected = if expected >= ICE_COVER_THRESHOLD_M {
                    expected
                } else {
                    0.0
                };
                assert!(
                    (got - expected).abs() <= THICKNESS_STEP_M / 2.0 + 1e-4,
                    "year {y} cell {idx}: {got} vs {expected}"
                );
            }
        }
    }

    #[test]
    fn exposure_years_follow_cover_toggles() {
        let timeline = record(5, DEFAULT_FRAME_BUDGET_BYTES);
        // Cell 0: 35, 25, 15, 5, 0 -> ice-free at the end of 2004.
        assert_eq!(timeline.cover_at(0, 2003), (true, None));
        assert_eq!(timeline.cover_at(0, 2004), (false, Some(2004)));
        assert_eq!(timeline.cover_at(0, 2005), (false, Some(2004)));
        // Cell 11: never covered at start, covered 2002-2003, free again in 2004.
        assert_eq!(timeline.cover_at(11, 2001), (false, None));
        assert_eq!(timeline.cover_at(11, 2002), (true, None));
        assert_eq!(timeline.cover_at(11, 2004), (false, Some(2004)));
        let mut exposed = Vec::new();
        timeline.fill_exposure(2001, &mut exposed);
        assert_eq!(exposed[0], COVERED);
        assert_eq!(exposed[8], NEVER_COVERED);
    }

    #[test]
    fn sparse_keyframes_interpolate_between_exact_frames() {
        // A budget of two frames of the 8-cell box forces an interval above one.
        let timeline = record(4, 2 * 16);
        assert!(timeline.keyframe_interval() > 1);
        let keyframes = timeline.keyframe_years();
        assert_eq!(keyframes.first(), Some(&2000));
        assert_eq!(keyframes.last(), Some(&2004));
        // Cell 7 thins linearly 42, 32, 22, 12, 2: interpolation is exact for a linear change.
        for y in 0..=4 {
            let got = timeline.ice_thickness_at(7, 2000 + y);
            assert!(
                (got - (42.0 - 10.0 * y as f32)).abs() < 0.06,
                "year {y}: {got}"
            );
        }
        let mut grid = Vec::new();
        timeline.fill_ice_thickness(2002, &mut grid);
        for (idx, &h) in grid.iter().enumerate() {
            assert_eq!(h, timeline.ice_thickness_at(idx, 2002), "cell {idx}");
        }
        let mut visited = vec![0.0_f32; grid.len()];
        timeline.for_each_ice_cell(2002, |idx, h| visited[idx] = h);
        for (idx, (&v, &h)) in visited.iter().zip(&grid).enumerate() {
            assert!((v - h).abs() < 1e-4, "cell {idx}: visited {v}, filled {h}");
        }
        let mut exposure = Vec::new();
        timeline.fill_exposure(2003, &mut exposure);
        let mut visited = vec![NEVER_COVERED; exposure.len()];
        timeline.for_each_glaciated_cell(2003, |idx, state| visited[idx] = state);
        assert_eq!(visited, exposure);
    }

    #[test]
    fn bytes_round_trip_and_truncation_is_refused() {
        let timeline = record(5, DEFAULT_FRAME_BUDGET_BYTES);
        let bytes = timeline.to_bytes();
        assert_eq!(Timeline::from_bytes(&bytes), Ok(timeline));
        assert!(matches!(
            Timeline::from_bytes(&bytes[..bytes.len() - 3]),
            Err(TimelineError::Truncated { .. })
        ));
        assert_eq!(
            Timeline::from_bytes(b"not a timeline at all"),
            Err(TimelineError::BadMagic)
        );
    }

    /// Stage of cell `idx` in year offset `y`: cells step up one stage every `idx + 1` years.
    fn stage_of(idx: usize, y: i32) -> u8 {
        (1 + y as usize / (idx + 1)).min(6) as u8
    }

    fn plants_of(y: i32) -> (Vec<u8>, Vec<f32>, Vec<f32>, Vec<f32>) {
        let stage = (0..12).map(|idx| stage_of(idx, y)).collect();
        let herbs = (0..12)
            .map(|idx| (0.05 * y as f32 + 0.01 * idx as f32).min(1.0))
            .collect();
        let trees = (0..12)
            .map(|idx| if idx % 2 == 0 { 0.3 } else { 0.0 })
            .collect();
        let soil = (0..12)
            .map(|idx| 0.1 * (idx % 5) as f32 + 0.02 * y as f32)
            .collect();
        (stage, herbs, trees, soil)
    }

    fn record_with_plants(n_years: u32, stage_budget: usize, cover_budget: usize) -> Timeline {
        let (stage, herbs, trees, soil) = plants_of(0);
        let mut recorder = TimelineRecorder::new(4, 2000, n_years, &thickness(0), 1 << 20)
            .with_plants(
                vec!["herbs".into(), "trees".into()],
                &stage,
                &[&herbs, &trees],
                &soil,
                stage_budget,
                cover_budget,
            );
        for y in 1..=n_years as i32 {
            recorder.record_year(2000 + y, &thickness(y));
            let (stage, herbs, trees, soil) = plants_of(y);
            recorder.record_plants(2000 + y, &stage, &[&herbs, &trees], &soil);
        }
        let (_, herbs, trees, soil) = plants_of(n_years as i32);
        recorder.finish_with_plants(&thickness(n_years as i32), &[&herbs, &trees], &soil)
    }

    #[test]
    fn stages_are_exact_every_year_and_covers_interpolate_between_keyframes() {
        // Budgets of three stage grids and three cover frames force intervals above one.
        let timeline = record_with_plants(10, 3 * 12, 3 * 36);
        let (stage_interval, cover_interval) = timeline.plant_intervals().unwrap();
        assert!(stage_interval > 1 && cover_interval > 1);
        let mut stage = Vec::new();
        for y in 0..=10 {
            timeline.fill_stage(2000 + y, &mut stage);
            let expected: Vec<u8> = (0..12).map(|idx| stage_of(idx, y)).collect();
            assert_eq!(stage, expected, "year {y}");
        }
        for idx in 0..12 {
            let expected: Vec<u8> = (0..=10).map(|y| stage_of(idx, y)).collect();
            assert_eq!(timeline.stage_history(idx), expected, "cell {idx}");
        }
        // Herb cover and soil change linearly, so interpolation holds to the 1/255 step.
        for y in 0..=10 {
            let (_, herbs, trees, soil) = plants_of(y);
            for idx in 0..12 {
                for (quantity, expected) in [
                    (PlantQuantity::Cover(0), herbs[idx]),
                    (PlantQuantity::Cover(1), trees[idx]),
                    (PlantQuantity::Soil, soil[idx]),
                ] {
                    let got = timeline.plant_value_at(idx, 2000 + y, quantity).unwrap();
                    assert!(
                        (got - expected).abs() <= 1.0 / 255.0,
                        "{quantity:?} year {y} cell {idx}: {got} vs {expected}"
                    );
                }
            }
        }
        assert_eq!(timeline.type_names(), ["herbs", "trees"]);
        assert!(timeline.plant_memory_bytes() > 0);
        let bytes = timeline.to_bytes();
        assert_eq!(Timeline::from_bytes(&bytes), Ok(timeline));
        assert!(Timeline::from_bytes(&bytes[..bytes.len() - 1]).is_err());
    }
}
