//! New lakes: depressions of the ice-free bed, found by priority-flood depression filling
//! (Barnes, Lehman & Mulla 2014, "Priority-flood: An optimal depression-filling and
//! watershed-labeling algorithm for digital elevation models", *Computers & Geosciences*
//! 62:117-127, Algorithm 2: the priority queue plus a plain queue for cells inside pits).
//!
//! Water leaves the grid at its edge and at nodata cells, so flooding starts from the valid
//! cells there and spreads inwards over the 8 neighbours, lowest level first; a cell reached
//! from a higher level is raised to it. The filled level minus the bed is each cell's fill
//! depth. A connected patch of cells with a fill depth is one depression with one level
//! surface (the level of its spill point); it counts as a lake when it is at least
//! [`MIN_LAKE_DEPTH_M`] deep and covers at least [`MIN_LAKE_AREA_M2`].
//!
//! New lakes are those with at least one cell under ice at some time in the run: pits in
//! ground that stays ice-free throughout are grid artefacts or ground the planner already
//! knows. A lake is shown in a year only when none of its cells nor the ring of cells around
//! it is under ice: water held by ice (ice-dammed or ice-contact lakes) and water under ice are not
//! modelled. The lake's level assumes the outlet does not erode and the dam holds; glacial
//! lakes can drain suddenly, so these are planning indications, not hazard assessments.

use std::cmp::{Ordering, Reverse};
use std::collections::{BinaryHeap, VecDeque};

use crate::base::grid::Grid;
use crate::run::timeline::Timeline;

/// Shallowest depression counted as a lake, m: filling a DEM raises many cells by a few
/// decimetres where the grid's noise or interpolation left tiny pits; thresholds of 1-2 m
/// are the usual guard (common practice, no source).
pub const MIN_LAKE_DEPTH_M: f32 = 1.0;

/// Smallest depression counted as a lake, m2 (0.01 km2): glacial-lake inventories commonly
/// map lakes from about this size (common practice, no source).
pub const MIN_LAKE_AREA_M2: f64 = 10_000.0;

/// Fills the depressions of `bed`: returns each cell's filled level, m (the bed where water
/// drains, the spill level inside a depression), NaN at nodata.
pub fn fill_depressions(bed: &Grid) -> Vec<f32> {
    let (n_cols, n_rows) = (bed.n_cols(), bed.n_rows());
    let mut level: Vec<f32> = bed
        .values
        .iter()
        .zip(&bed.nodata)
        .map(|(&z, &missing)| if missing { f32::NAN } else { z })
        .collect();
    // Nodata cells are closed from the start: water reaching them leaves the grid.
    let mut closed: Vec<bool> = bed.nodata.clone();
    let mut open: BinaryHeap<Reverse<Queued>> = BinaryHeap::new();
    let mut pit: VecDeque<usize> = VecDeque::new();
    for row in 0..n_rows {
        for col in 0..n_cols {
            let idx = row * n_cols + col;
            if closed[idx] {
                continue;
            }
            let on_edge = row == 0 || col == 0 || row + 1 == n_rows || col + 1 == n_cols;
            let by_nodata = || neighbours(col, row, n_cols, n_rows).any(|n| bed.nodata[n]);
            if on_edge || by_nodata() {
                closed[idx] = true;
                open.push(Reverse(Queued {
                    level_m: level[idx],
                    idx,
                }));
            }
        }
    }
    loop {
        let idx = match pit.pop_front() {
            Some(idx) => idx,
            None => match open.pop() {
                Some(Reverse(q)) => q.idx,
                None => break,
            },
        };
        let here = level[idx];
        let (col, row) = (idx % n_cols, idx / n_cols);
        for n in neighbours(col, row, n_cols, n_rows) {
            if closed[n] {
                continue;
            }
            closed[n] = true;
            if level[n] <= here {
                // Inside a pit: raised to the level it is reached from, taken in FIFO order
                // without touching the heap (Barnes et al. 2014, Algorithm 2).
                level[n] = here;
                pit.push_back(n);
            } else {
                open.push(Reverse(Queued {
                    level_m: level[n],
                    idx: n,
                }));
            }
        }
    }
    level
}

/// Fill depth per cell, m: filled level minus bed (0 where water drains and at nodata).
pub fn fill_depth_m(bed: &Grid) -> Vec<f32> {
    depth_from_filled(bed, &fill_depressions(bed))
}

fn depth_from_filled(bed: &Grid, filled: &[f32]) -> Vec<f32> {
    filled
        .iter()
        .zip(&bed.values)
        .zip(&bed.nodata)
        .map(|((&f, &z), &missing)| if missing { 0.0 } else { (f - z).max(0.0) })
        .collect()
}

/// One lake: a connected depression of the bed deep and large enough.
#[derive(Clone, Debug, PartialEq)]
pub struct Lake {
    /// Number from 1, in the order the lakes' first cells come row by row.
    pub id: u32,
    /// Water surface area when full, m2.
    pub area_m2: f64,
    /// Largest fill depth, m.
    pub max_depth_m: f32,
    /// Water volume when full, m3.
    pub volume_m3: f64,
    /// Water level (the spill height), m.
    pub level_m: f32,
    /// The lake's cells.
    pub cells: Vec<u32>,
    /// Cells next to the lake (8 neighbours) that are not part of it: its shore and outlet.
    pub shore: Vec<u32>,
}

/// The lakes of a bed, found once; any year is then a check of their cells against the ice.
#[derive(Clone, Debug, PartialEq)]
pub struct LakeMap {
    /// Fill depth of lake cells, m; 0 elsewhere (drained ground and rejected depressions).
    pub depth_m: Vec<f32>,
    pub lakes: Vec<Lake>,
}

impl LakeMap {
    /// Fills `bed`, labels its depressions (8-connected) and keeps those that pass
    /// [`MIN_LAKE_DEPTH_M`] and [`MIN_LAKE_AREA_M2`].
    pub fn from_bed(bed: &Grid) -> LakeMap {
        Self::from_bed_with(bed, MIN_LAKE_DEPTH_M, MIN_LAKE_AREA_M2)
    }

    /// As [`LakeMap::from_bed`] with other thresholds.
    pub fn from_bed_with(bed: &Grid, min_depth_m: f32, min_area_m2: f64) -> LakeMap {
        let (n_cols, n_rows) = (bed.n_cols(), bed.n_rows());
        let filled = fill_depressions(bed);
        let raw_depth = depth_from_filled(bed, &filled);
        let cell_area_m2 = bed.geometry.cell_area_m2();
        let mut depth_m = vec![0.0_f32; raw_depth.len()];
        let mut seen = vec![false; raw_depth.len()];
        let mut lakes = Vec::new();
        let mut stack = Vec::new();
        for start in 0..raw_depth.len() {
            if seen[start] || raw_depth[start] <= 0.0 {
                continue;
            }
            seen[start] = true;
            stack.push(start);
            let mut cells = Vec::new();
            while let Some(idx) = stack.pop() {
                cells.push(idx as u32);
                for n in neighbours(idx % n_cols, idx / n_cols, n_cols, n_rows) {
                    if !seen[n] && raw_depth[n] > 0.0 {
                        seen[n] = true;
                        stack.push(n);
                    }
                }
            }
            let area_m2 = cells.len() as f64 * cell_area_m2;
            let max_depth_m = cells
                .iter()
                .map(|&c| raw_depth[c as usize])
                .fold(0.0, f32::max);
            if max_depth_m < min_depth_m || area_m2 < min_area_m2 {
                continue;
            }
            cells.sort_unstable();
            let volume_m3 = cells
                .iter()
                .map(|&c| f64::from(raw_depth[c as usize]) * cell_area_m2)
                .sum();
            for &c in &cells {
                depth_m[c as usize] = raw_depth[c as usize];
            }
            lakes.push(Lake {
                id: lakes.len() as u32 + 1,
                area_m2,
                max_depth_m,
                volume_m3,
                level_m: filled[cells[0] as usize],
                cells,
                shore: Vec::new(),
            });
        }
        for lake in &mut lakes {
            let mut shore: Vec<u32> = lake
                .cells
                .iter()
                .flat_map(|&c| {
                    let c = c as usize;
                    neighbours(c % n_cols, c / n_cols, n_cols, n_rows)
                })
                .filter(|&n| depth_m[n] == 0.0 && !bed.nodata[n])
                .map(|n| n as u32)
                .collect();
            shore.sort_unstable();
            shore.dedup();
            lake.shore = shore;
        }
        LakeMap { depth_m, lakes }
    }

    /// The lakes of `bed` that lie at least partly on ground the run had under ice, numbered
    /// afresh from 1.
    pub fn new_lakes(bed: &Grid, timeline: &Timeline) -> LakeMap {
        let mut map = Self::from_bed(bed);
        if timeline.n_cells() != map.depth_m.len() {
            return map;
        }
        let mut glaciated = vec![false; map.depth_m.len()];
        timeline.for_each_glaciated_cell(timeline.start_year(), |idx, _| glaciated[idx] = true);
        let depth_m = &mut map.depth_m;
        map.lakes.retain(|lake| {
            let new = lake.cells.iter().any(|&c| glaciated[c as usize]);
            if !new {
                for &c in &lake.cells {
                    depth_m[c as usize] = 0.0;
                }
            }
            new
        });
        for (k, lake) in map.lakes.iter_mut().enumerate() {
            lake.id = k as u32 + 1;
        }
        map
    }

    /// Whether `lake` is free of ice at the end of `year`: none of its cells nor its shore is
    /// under ice. Only then is it shown.
    pub fn is_ice_free(lake: &Lake, timeline: &Timeline, year: i32) -> bool {
        lake.cells
            .iter()
            .chain(&lake.shore)
            .all(|&c| !timeline.cover_at(c as usize, year).0)
    }

    /// Fills `depth_m` (resized to the grid) with the depth of the lakes that are ice-free at
    /// the end of `year`, 0 elsewhere.
    pub fn fill_year_depth(&self, timeline: &Timeline, year: i32, depth_m: &mut Vec<f32>) {
        depth_m.clear();
        depth_m.resize(self.depth_m.len(), 0.0);
        for lake in &self.lakes {
            if Self::is_ice_free(lake, timeline, year) {
                for &c in &lake.cells {
                    depth_m[c as usize] = self.depth_m[c as usize];
                }
            }
        }
    }

    /// Surface area of the lakes ice-free at the end of `year`, m2.
    pub fn ice_free_area_m2(&self, timeline: &Timeline, year: i32) -> f64 {
        self.lakes
            .iter()
            .filter(|lake| Self::is_ice_free(lake, timeline, year))
            .map(|lake| lake.area_m2)
            .sum()
    }

    /// Deepest lake cell, m (0 without lakes).
    pub fn max_depth_m(&self) -> f32 {
        self.lakes.iter().map(|l| l.max_depth_m).fold(0.0, f32::max)
    }
}

/// A cell waiting in the priority queue, ordered by level then index (so the order of equal
/// levels is fixed and runs repeat exactly).
#[derive(Clone, Copy, Debug, PartialEq)]
struct Queued {
    level_m: f32,
    idx: usize,
}

impl Eq for Queued {}

impl PartialOrd for Queued {
    fn partial_cmp(&self, other: &Self) -> Option<Ordering> {
        Some(self.cmp(other))
    }
}

impl Ord for Queued {
    fn cmp(&self, other: &Self) -> Ordering {
        self.level_m
            .total_cmp(&other.level_m)
            .then(self.idx.cmp(&other.idx))
    }
}

/// The up to 8 neighbours of a cell that lie on the grid.
fn neighbours(col: usize, row: usize, n_cols: usize, n_rows: usize) -> impl Iterator<Item = usize> {
    const OFFSETS: [(isize, isize); 8] = [
        (-1, -1),
        (0, -1),
        (1, -1),
        (-1, 0),
        (1, 0),
        (-1, 1),
        (0, 1),
        (1, 1),
    ];
    OFFSETS.iter().filter_map(move |&(dc, dr)| {
        let (c, r) = (col as isize + dc, row as isize + dr);
        (c >= 0 && r >= 0 && (c as usize) < n_cols && (r as usize) < n_rows)
            .then(|| r as usize * n_cols + c as usize)
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::base::grid::GridGeometry;

    fn grid(n_cols: usize, values: &[f32]) -> Grid {
        let geometry = GridGeometry {
            n_cols,
            n_rows: values.len() / n_cols,
            cell_size_m: 10.0,
            west_m: 0.0,
            north_m: 0.0,
            epsg: None,
        };
        Grid::from_values(geometry, values.to_vec())
    }

    #[test]
    fn a_pit_fills_to_its_lowest_rim_cell() {
        // The centre pit at 1 m is ringed by 5 m cells except one 3 m cell, which spills.
        #[rustfmt::skip]
        let bed = grid(5, &[
            9.0, 9.0, 9.0, 9.0, 9.0,
            9.0, 5.0, 5.0, 5.0, 9.0,
            9.0, 5.0, 1.0, 3.0, 2.0,
            9.0, 5.0, 5.0, 5.0, 9.0,
            9.0, 9.0, 9.0, 9.0, 9.0,
        ]);
        let depth = fill_depth_m(&bed);
        assert_eq!(depth[12], 2.0);
        assert_eq!(depth.iter().filter(|&&d| d > 0.0).count(), 1);
    }

    #[test]
    fn nodata_drains_like_the_edge() {
        // A 3 m deep pit whose neighbour is nodata: the water leaves there.
        let mut bed = grid(5, &[5.0; 25]);
        bed.values[12] = 2.0;
        let closed = fill_depth_m(&bed);
        assert_eq!(closed[12], 3.0);
        bed.nodata[13] = true;
        assert_eq!(fill_depth_m(&bed)[12], 0.0);
    }

    #[test]
    fn thresholds_reject_shallow_and_small_depressions() {
        // 10 m cells (100 m2): a 0.5 m pit and a 4 m pit of one cell each.
        let mut bed = grid(7, &[10.0; 49]);
        bed.values[8] = 9.5;
        bed.values[26] = 6.0;
        let lakes = LakeMap::from_bed_with(&bed, 1.0, 100.0);
        assert_eq!(lakes.lakes.len(), 1);
        assert_eq!(lakes.lakes[0].cells, vec![26]);
        assert_eq!(lakes.lakes[0].volume_m3, 400.0);
        assert_eq!(lakes.lakes[0].shore.len(), 8);
        assert_eq!(lakes.depth_m[8], 0.0);
        assert!(LakeMap::from_bed_with(&bed, 1.0, 200.0).lakes.is_empty());
    }
}
