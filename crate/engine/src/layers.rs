//! Map layers of a recorded run: any layer and year of a [`Timeline`] drawn into an RGBA buffer
//! over Horn hillshade, with legends in the layer's units. Ramps and palette are our own.
//!
//! Continuous ramps change CIE L* monotonically from end to end, so order reads in greyscale
//! print and for the common colour-vision deficiencies; hue only adds character. Ice runs from
//! pale (thin) to deep blue (thick); exposure year from dark plum (exposed early, the oldest
//! ground) to pale straw (exposed late). Ground a layer does not describe is drawn as grey
//! shaded relief so the layer stands out. The stage palette separates neighbouring stages by
//! lightness as well as hue. Plant cover runs from pale cream (none) to deep green (full);
//! the soil index from pale sand (raw till) to dark brown (developed soil).

use serde::Serialize;

use crate::render::{ColorRamp, LegendStop};
use crate::timeline::{PlantQuantity, Timeline, COVERED, NEVER_COVERED};

/// Ice thickness: pale ice-blue for thin ice to deep blue for thick ice (L* falls).
pub const ICE_RAMP: ColorRamp = ColorRamp {
    stops: &[
        (0.0, [226, 242, 248]),
        (0.25, [163, 207, 230]),
        (0.5, [98, 162, 208]),
        (0.75, [50, 106, 172]),
        (1.0, [27, 48, 108]),
    ],
};

/// Exposure year: dark plum (early) through rose and amber to pale straw (late); L* rises.
pub const EXPOSURE_RAMP: ColorRamp = ColorRamp {
    stops: &[
        (0.0, [54, 30, 86]),
        (0.25, [118, 46, 114]),
        (0.5, [188, 74, 96]),
        (0.75, [232, 138, 72]),
        (1.0, [248, 228, 146]),
    ],
};

/// Plant cover: pale cream (no cover) through sage to deep green (full cover); L* falls.
pub const COVER_RAMP: ColorRamp = ColorRamp {
    stops: &[
        (0.0, [248, 244, 222]),
        (0.25, [206, 224, 160]),
        (0.5, [134, 188, 112]),
        (0.75, [56, 136, 92]),
        (1.0, [14, 72, 62]),
    ],
};

/// Soil development index: pale sand (raw till) through ochre to dark brown; L* falls.
pub const SOIL_RAMP: ColorRamp = ColorRamp {
    stops: &[
        (0.0, [246, 238, 216]),
        (0.25, [226, 200, 152]),
        (0.5, [190, 146, 98]),
        (0.75, [134, 92, 62]),
        (1.0, [70, 46, 34]),
    ],
};

/// Flat colour of ice where a layer describes the ground, not the ice.
pub const ICE_FLAT: [u8; 3] = [216, 233, 243];

/// Succession stages by code (0 ice ... 6 mature forest): label and colour. Lightness steps
/// down from pioneer to mature forest, so the order of succession reads in greyscale.
pub const STAGE_PALETTE: [(&str, [u8; 3]); 7] = [
    ("ice", ICE_FLAT),
    ("bare ground", [176, 168, 158]),
    ("pioneer", [236, 214, 128]),
    ("meadow", [170, 204, 104]),
    ("shrubland", [196, 132, 70]),
    ("young forest", [62, 146, 118]),
    ("mature forest", [26, 76, 58]),
];

/// Share of the colour kept in full shadow (as for the terrain map; common practice, no
/// source).
const SHADE_FLOOR: f32 = 0.45;

/// Layers of a recorded run.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum LayerKind {
    /// Ice thickness, m.
    IceThickness,
    /// Year the ground became ice-free.
    ExposureYear,
    /// Succession stage, codes 0-6 as [`STAGE_PALETTE`].
    Stage,
    /// Cover of one plant type (index), %.
    Cover(usize),
    /// Soil development index, 0-1.
    Soil,
}

impl LayerKind {
    /// Parses the name the page uses.
    pub fn from_name(name: &str) -> Option<LayerKind> {
        match name {
            "ice_thickness" => Some(LayerKind::IceThickness),
            "exposure_year" => Some(LayerKind::ExposureYear),
            "stage" => Some(LayerKind::Stage),
            "soil" => Some(LayerKind::Soil),
            _ => name
                .strip_prefix("cover:")
                .and_then(|t| t.parse().ok())
                .map(LayerKind::Cover),
        }
    }
}

/// A named colour of a legend (categories, or ground a ramp does not cover).
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct LegendClass {
    pub label: String,
    pub rgb: [u8; 3],
}

/// Legend of a layer: a ramp (when `stops` is not empty) and named classes.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct LayerLegend {
    pub title: String,
    pub unit: String,
    pub min: f64,
    pub max: f64,
    pub stops: Vec<LegendStop>,
    pub classes: Vec<LegendClass>,
    pub note: String,
}

/// Draws timeline layers; owns the per-cell shading so a draw allocates nothing after the
/// first. A draw copies the pre-shaded ground and recolours only the cells the layer
/// describes, with integer shading, so scrubbing a 1M-cell grid stays within a frame.
#[derive(Clone, Debug)]
pub struct LayerRenderer {
    /// Hillshade brightness per cell in 1/256, 0 marks nodata.
    light: Vec<u16>,
    /// Ground grey, shaded, as RGBA bytes of the whole grid.
    ground_rgba: Vec<u8>,
    /// Stage per cell of the year being drawn (scratch).
    stage: Vec<u8>,
}

impl LayerRenderer {
    /// `hillshade` in [0, 1] (NaN where unknown); `nodata` cells stay transparent.
    pub fn new(hillshade: &[f32], nodata: &[bool]) -> LayerRenderer {
        let light: Vec<u16> = hillshade
            .iter()
            .zip(nodata)
            .map(|(&s, &missing)| {
                if missing {
                    0
                } else {
                    let s = if s.is_finite() {
                        s.clamp(0.0, 1.0)
                    } else {
                        1.0
                    };
                    ((SHADE_FLOOR + (1.0 - SHADE_FLOOR) * s) * 256.0).round() as u16
                }
            })
            .collect();
        let mut ground_rgba = vec![0; 4 * light.len()];
        for (idx, &l) in light.iter().enumerate() {
            put(&mut ground_rgba, idx, GROUND_GREY, l);
        }
        LayerRenderer {
            light,
            ground_rgba,
            stage: Vec::new(),
        }
    }

    /// Fills `rgba` (4 bytes per cell) with `kind` at the end of `year`.
    pub fn render(&mut self, timeline: &Timeline, kind: LayerKind, year: i32, rgba: &mut Vec<u8>) {
        if timeline.n_cells() != self.light.len() {
            // A timeline of another grid: draw the ground only rather than misplace cells.
            rgba.clear();
            rgba.extend_from_slice(&self.ground_rgba);
            return;
        }
        rgba.clear();
        rgba.extend_from_slice(&self.ground_rgba);
        let light = &self.light;
        match kind {
            LayerKind::IceThickness => {
                let lut = lut(ICE_RAMP);
                let to_index = 255.0 / ice_scale_m(timeline);
                timeline.for_each_ice_cell(year, |idx, h| {
                    put(
                        rgba,
                        idx,
                        lut[((h * to_index) as usize).min(255)],
                        light[idx],
                    );
                });
            }
            LayerKind::ExposureYear => {
                let lut = lut(EXPOSURE_RAMP);
                let first = timeline.start_year();
                let span = (timeline.last_year() - first).max(1) as f32;
                timeline.for_each_glaciated_cell(year, |idx, state| {
                    let colour = match state {
                        COVERED => ICE_FLAT,
                        NEVER_COVERED => GROUND_GREY,
                        y => lut[(((y - first) as f32 / span * 255.0) as usize).min(255)],
                    };
                    put(rgba, idx, colour, light[idx]);
                });
            }
            LayerKind::Stage => {
                timeline.fill_stage(year, &mut self.stage);
                for (idx, &code) in self.stage.iter().enumerate() {
                    let colour = STAGE_PALETTE
                        .get(usize::from(code))
                        .map_or(GROUND_GREY, |c| c.1);
                    put(rgba, idx, colour, light[idx]);
                }
            }
            LayerKind::Cover(_) | LayerKind::Soil => {
                let (ramp, quantity) = match kind {
                    LayerKind::Cover(t) => (COVER_RAMP, PlantQuantity::Cover(t)),
                    _ => (SOIL_RAMP, PlantQuantity::Soil),
                };
                let lut = lut(ramp);
                timeline.for_each_plant_value(year, quantity, |idx, q| {
                    put(rgba, idx, lut[(q as usize).min(255)], light[idx]);
                });
                // The plants' ground under ice is drawn as ice.
                timeline.for_each_ice_cell(year, |idx, _| put(rgba, idx, ICE_FLAT, light[idx]));
            }
        }
    }
}

/// Grey of ground a layer does not describe, before shading.
const GROUND_GREY: [u8; 3] = [196, 194, 190];

/// Upper end of the ice ramp: the run's largest stored thickness, at least 10 m so a thin
/// glacier is not drawn as if it were deep.
fn ice_scale_m(timeline: &Timeline) -> f32 {
    timeline.max_thickness_m().max(10.0)
}

fn lut(ramp: ColorRamp) -> [[u8; 3]; 256] {
    let mut table = [[0; 3]; 256];
    for (i, entry) in table.iter_mut().enumerate() {
        *entry = ramp.at(i as f32 / 255.0);
    }
    table
}

/// Writes `colour` shaded by `light` (1/256 units, 0 = nodata, transparent) at cell `idx`.
#[inline]
fn put(rgba: &mut [u8], idx: usize, colour: [u8; 3], light: u16) {
    let pixel: &mut [u8; 4] = match rgba.get_mut(4 * idx..4 * idx + 4) {
        Some(slice) => slice.try_into().expect("four bytes"),
        None => return,
    };
    if light == 0 {
        *pixel = [0, 0, 0, 0];
        return;
    }
    let shade = |c: u8| ((u32::from(c) * u32::from(light)) >> 8).min(255) as u8;
    *pixel = [shade(colour[0]), shade(colour[1]), shade(colour[2]), 255];
}

fn ramp_stops(ramp: ColorRamp, min: f64, max: f64) -> Vec<LegendStop> {
    ramp.stops
        .iter()
        .map(|&(t, rgb)| LegendStop {
            value: min + f64::from(t) * (max - min),
            rgb,
        })
        .collect()
}

/// The legend that matches [`LayerRenderer::render`] for `kind`.
pub fn legend(timeline: &Timeline, kind: LayerKind) -> LayerLegend {
    let class = |label: &str, rgb: [u8; 3]| LegendClass {
        label: label.to_string(),
        rgb,
    };
    match kind {
        LayerKind::IceThickness => {
            let max = f64::from(ice_scale_m(timeline));
            LayerLegend {
                title: "Ice thickness".into(),
                unit: "m".into(),
                min: 0.0,
                max,
                stops: ramp_stops(ICE_RAMP, 0.0, max),
                classes: vec![class("ice-free ground", GROUND_GREY)],
                note: "Ice at least 1 m thick. Over shaded relief of the bed.".into(),
            }
        }
        LayerKind::ExposureYear => {
            let (first, last) = (
                timeline.start_year(),
                timeline.last_year().max(timeline.start_year() + 1),
            );
            LayerLegend {
                title: "Year exposed".into(),
                unit: "year".into(),
                min: f64::from(first),
                max: f64::from(last),
                stops: ramp_stops(EXPOSURE_RAMP, f64::from(first), f64::from(last)),
                classes: vec![
                    class("under ice", ICE_FLAT),
                    class("ice-free at the start", GROUND_GREY),
                ],
                note: "Year the ground became ice-free (the latest, if ice came back).".into(),
            }
        }
        LayerKind::Stage => LayerLegend {
            title: "Succession stage".into(),
            unit: String::new(),
            min: 0.0,
            max: 0.0,
            stops: Vec::new(),
            classes: STAGE_PALETTE
                .iter()
                .map(|&(label, rgb)| class(label, rgb))
                .collect(),
            note: "From cover and age of the plant types, every year exact.".into(),
        },
        LayerKind::Cover(t) => {
            let name = timeline
                .type_names()
                .get(t)
                .map_or_else(|| format!("type {}", t + 1), |n| n.clone());
            LayerLegend {
                title: format!("Cover: {name}"),
                unit: "%".into(),
                min: 0.0,
                max: 100.0,
                stops: ramp_stops(COVER_RAMP, 0.0, 100.0),
                classes: vec![class("under ice", ICE_FLAT)],
                note: "Share of the cell covered, in 0.4 % steps, between stored years.".into(),
            }
        }
        LayerKind::Soil => LayerLegend {
            title: "Soil development".into(),
            unit: "index".into(),
            min: 0.0,
            max: 1.0,
            stops: ramp_stops(SOIL_RAMP, 0.0, 1.0),
            classes: vec![class("under ice", ICE_FLAT)],
            note: "0 raw till, 1 mature soil.".into(),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::render::cie_lightness as lightness;
    use crate::timeline::{TimelineRecorder, DEFAULT_FRAME_BUDGET_BYTES};

    fn check_monotonic(ramp: ColorRamp, rising: bool) {
        let mut last = if rising { -1.0 } else { 101.0 };
        for step in 0..=100 {
            let l = lightness(ramp.at(step as f32 / 100.0));
            assert!(
                if rising { l > last } else { l < last },
                "L* not monotonic at step {step}: {l} after {last}"
            );
            last = l;
        }
    }

    #[test]
    fn ramps_change_lightness_monotonically_and_widely() {
        check_monotonic(ICE_RAMP, false);
        check_monotonic(EXPOSURE_RAMP, true);
        check_monotonic(COVER_RAMP, false);
        check_monotonic(SOIL_RAMP, false);
        for ramp in [ICE_RAMP, EXPOSURE_RAMP, COVER_RAMP, SOIL_RAMP] {
            let span = (lightness(ramp.at(0.0)) - lightness(ramp.at(1.0))).abs();
            assert!(span > 60.0, "L* span only {span}");
        }
    }

    #[test]
    fn stage_palette_separates_succession_by_lightness() {
        // Pioneer to mature forest: each stage darker than the one before, by at least 5 L*.
        for pair in STAGE_PALETTE[2..].windows(2) {
            let (a, b) = (lightness(pair[0].1), lightness(pair[1].1));
            assert!(a - b > 5.0, "{} ({a}) vs {} ({b})", pair[0].0, pair[1].0);
        }
    }

    #[test]
    fn renders_ice_and_exposure_per_year() {
        // 3 x 1 grid: thick ice, ice that melts out in the first year, ground.
        let start = [80.0_f32, 5.0, 0.0];
        let after = [70.0_f32, 0.0, 0.0];
        let mut recorder = TimelineRecorder::new(3, 2000, 1, &start, DEFAULT_FRAME_BUDGET_BYTES);
        recorder.record_year(2001, &after);
        let timeline = recorder.finish(&after);
        let mut renderer = LayerRenderer::new(&[1.0; 3], &[false; 3]);
        // Full light is 256/256: colours come out exactly as the ramp gives them.
        let mut rgba = Vec::new();
        renderer.render(&timeline, LayerKind::IceThickness, 2000, &mut rgba);
        assert_eq!(&rgba[..3], &ICE_RAMP.at(1.0)[..]);
        assert_ne!(&rgba[4..7], &GROUND_GREY[..]);
        assert_eq!(&rgba[8..11], &GROUND_GREY[..]);
        renderer.render(&timeline, LayerKind::IceThickness, 2001, &mut rgba);
        assert_eq!(&rgba[4..7], &GROUND_GREY[..]);
        renderer.render(&timeline, LayerKind::ExposureYear, 2001, &mut rgba);
        assert_eq!(&rgba[..3], &ICE_FLAT[..]);
        assert_eq!(&rgba[4..7], &EXPOSURE_RAMP.at(1.0)[..]);
        assert_eq!(&rgba[8..11], &GROUND_GREY[..]);
        let legend = legend(&timeline, LayerKind::ExposureYear);
        assert_eq!((legend.min, legend.max), (2000.0, 2001.0));
    }

    #[test]
    fn renders_stage_cover_and_soil_of_a_run_with_plants() {
        // 3 x 1 grid: ice that stays, ice that melts out in 2001, old meadow.
        let start = [80.0_f32, 5.0, 0.0];
        let after = [70.0_f32, 0.0, 0.0];
        let mut recorder = TimelineRecorder::new(3, 2000, 1, &start, DEFAULT_FRAME_BUDGET_BYTES)
            .with_plants(
                vec!["herbs".into()],
                &[0, 0, 3],
                &[&[0.0, 0.0, 1.0]],
                &[0.0, 0.0, 0.5],
                1 << 20,
                1 << 20,
            );
        recorder.record_year(2001, &after);
        recorder.record_plants(2001, &[0, 1, 3], &[&[0.0, 0.0, 1.0]], &[0.0, 0.0, 0.5]);
        let timeline = recorder.finish_with_plants(&after, &[&[0.0, 0.0, 1.0]], &[0.0, 0.0, 0.5]);
        let mut renderer = LayerRenderer::new(&[1.0; 3], &[false; 3]);
        let mut rgba = Vec::new();
        renderer.render(&timeline, LayerKind::Stage, 2000, &mut rgba);
        assert_eq!(&rgba[4..7], &STAGE_PALETTE[0].1[..]);
        renderer.render(&timeline, LayerKind::Stage, 2001, &mut rgba);
        assert_eq!(&rgba[..3], &STAGE_PALETTE[0].1[..]);
        assert_eq!(&rgba[4..7], &STAGE_PALETTE[1].1[..]);
        assert_eq!(&rgba[8..11], &STAGE_PALETTE[3].1[..]);
        renderer.render(&timeline, LayerKind::Cover(0), 2001, &mut rgba);
        assert_eq!(&rgba[..3], &ICE_FLAT[..]);
        assert_eq!(&rgba[4..7], &COVER_RAMP.at(0.0)[..]);
        assert_eq!(&rgba[8..11], &COVER_RAMP.at(1.0)[..]);
        renderer.render(&timeline, LayerKind::Soil, 2001, &mut rgba);
        assert_eq!(&rgba[8..11], &SOIL_RAMP.at(128.0 / 255.0)[..]);
        assert_eq!(LayerKind::from_name("cover:0"), Some(LayerKind::Cover(0)));
        let stage_legend = legend(&timeline, LayerKind::Stage);
        assert_eq!(stage_legend.classes.len(), 7);
        assert_eq!(stage_legend.classes[6].label, "mature forest");
        assert_eq!(legend(&timeline, LayerKind::Cover(0)).title, "Cover: herbs");
    }
}
