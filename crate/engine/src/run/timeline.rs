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

pub(super) const MAGIC: &[u8; 8] = b"FFTLINE3";

/// Per-cell flag: the cell was ice-covered at the start.
pub(super) const FLAG_COVERED_AT_START: u8 = 1;
/// Per-cell flag: the cell has toggles beyond the first, in `later_toggles`.
pub(super) const FLAG_MORE_TOGGLES: u8 = 2;
/// `first_toggle` value of a cell whose cover never changed.
pub(super) const NO_TOGGLE: u16 = u16::MAX;

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
pub(super) struct Frame {
    pub(super) year: i32,
    pub(super) col0: u32,
    pub(super) row0: u32,
    pub(super) width: u32,
    pub(super) height: u32,
    /// Thickness in units of [`THICKNESS_STEP_M`], row-major over the box.
    pub(super) thickness_q: Vec<u16>,
}

impl Frame {
    pub(super) fn from_thickness(year: i32, n_cols: usize, thickness_m: &[f32]) -> Frame {
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

    pub(super) fn thickness_q(&self, col: usize, row: usize) -> u16 {
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
pub(super) fn union_box(a: &Frame, b: &Frame) -> (usize, usize, usize, usize) {
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

pub(super) fn quantise(h: f32) -> u16 {
    if h.is_finite() && h > 0.0 {
        (h / THICKNESS_STEP_M).round().min(f32::from(u16::MAX)) as u16
    } else {
        0
    }
}

/// The recorded run: cover events per cell and thickness keyframes.
#[derive(Clone, Debug, PartialEq)]
pub struct Timeline {
    pub(super) n_cols: usize,
    pub(super) n_rows: usize,
    pub(super) start_year: i32,
    /// Last recorded year.
    pub(super) last_year: i32,
    pub(super) keyframe_interval: u32,
    pub(super) frames: Vec<Frame>,
    pub(super) flags: Vec<u8>,
    /// Years since the start of each cell's first cover toggle, or [`NO_TOGGLE`].
    pub(super) first_toggle: Vec<u16>,
    /// Second and later toggles, sorted by cell then year: (cell index, years since start).
    pub(super) later_toggles: Vec<(u32, u16)>,
    /// Largest stored thickness (quantised), kept so a draw need not scan the frames.
    pub(super) max_thickness_q: u16,
    /// Stages, covers and soil, when the run had plants.
    pub(super) plants: Option<PlantTrack>,
    /// The exact bed, the glacier domain and how the run's ice was set up, when recorded.
    pub(super) start: Option<RunStart>,
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
pub(super) struct PlantTrack {
    pub(super) type_names: Vec<String>,
    pub(super) stage_interval: u32,
    /// Full stage grids at keyframe years, in year order; the first is the start.
    pub(super) stage_frames: Vec<(i32, Vec<u8>)>,
    /// `changes[change_start[k]..change_start[k + 1]]` are the stage changes of year
    /// `start_year + 1 + k`: (cell index, new stage).
    pub(super) change_start: Vec<u32>,
    pub(super) changes: Vec<(u32, u8)>,
    pub(super) cover_interval: u32,
    pub(super) cover_frames: Vec<CoverFrame>,
}

/// Cover of every type (type-major) and soil index of one keyframe year, in 1/255 steps.
#[derive(Clone, Debug, PartialEq)]
pub(super) struct CoverFrame {
    pub(super) year: i32,
    pub(super) cover_q: Vec<u8>,
    pub(super) soil_q: Vec<u8>,
}

impl CoverFrame {
    pub(super) fn new(year: i32, covers: &[&[f32]], soil: &[f32]) -> CoverFrame {
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
pub(super) fn quantise_unit(v: f32) -> u8 {
    if v.is_finite() {
        (v.clamp(0.0, 1.0) * 255.0).round() as u8
    } else {
        0
    }
}

/// Smallest keyframe interval that keeps the frames of `n_years` inside `budget_bytes`.
pub(super) fn keyframe_interval_for(n_years: u32, frame_bytes: usize, budget_bytes: usize) -> u32 {
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

pub(super) fn max_q(frames: &[Frame]) -> u16 {
    frames
        .iter()
        .flat_map(|f| f.thickness_q.iter())
        .copied()
        .max()
        .unwrap_or(0)
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
    pub(super) fn cover_bracket(&self, year: i32) -> Option<(&CoverFrame, &CoverFrame, f32)> {
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

    pub(super) fn quantity_slice<'a>(
        &self,
        frame: &'a CoverFrame,
        quantity: PlantQuantity,
    ) -> &'a [u8] {
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

    pub(super) fn clamp_year(&self, year: i32) -> i32 {
        year.clamp(self.start_year, self.last_year)
    }

    /// Later toggles of one cell (usually none).
    pub(super) fn later_toggles_of(&self, idx: usize) -> &[(u32, u16)] {
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
    pub(super) fn cover_at_offset(&self, idx: usize, offset: u16) -> (bool, Option<i32>) {
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
    pub(super) fn bracket(&self, year: i32) -> (&Frame, &Frame, f32) {
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
}

/// Exposure marker: under ice in that year.
pub const COVERED: i32 = i32::MAX;
/// Exposure marker: ice-free from the start of the run.
pub const NEVER_COVERED: i32 = i32::MIN;

/// Bytes a plant track holds.
pub(super) fn plant_memory_bytes(plants: &PlantTrack) -> usize {
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
