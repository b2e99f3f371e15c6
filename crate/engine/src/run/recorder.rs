//! Records a run year by year into a [`Timeline`]: exact cover events each year, ice
//! thickness, stages and covers at keyframes chosen to fit their memory budgets.

use crate::ice::exposure::ICE_COVER_THRESHOLD_M;
use crate::run::timeline::*;

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
