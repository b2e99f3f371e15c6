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
//!
//! The planner analyses (new lakes, steep bare ground) draw over a paler, flatter relief so
//! the few cells they mark stand out. Lakes are level water, so they are drawn unshaded, in
//! their legend's own colours, from light blue (shallow) to deep navy (deep); steep bare ground
//! is one dark vermillion class, darker than any of the pale relief, so it reads in greyscale.

use serde::Serialize;

use crate::base::grid::Grid;
use crate::run::timeline::{PlantQuantity, Timeline, COVERED, NEVER_COVERED};
use crate::view::lakes::LakeMap;
use crate::view::render::{ColorRamp, LegendStop};
use crate::view::steep_ground::{self, STEEP_SLOPE_DEG};

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

/// Lake depth: light blue (shallow) to deep navy (deep); L* falls.
pub const LAKE_RAMP: ColorRamp = ColorRamp {
    stops: &[
        (0.0, [146, 204, 232]),
        (0.25, [84, 156, 206]),
        (0.5, [38, 106, 172]),
        (0.75, [22, 70, 138]),
        (1.0, [12, 38, 96]),
    ],
};

/// Depth at the dark end of [`LAKE_RAMP`], m; deeper water takes its colour. Fixed, so
/// years, runs and scenarios compare on one scale.
pub const LAKE_DEPTH_SCALE_M: f32 = 50.0;

/// Ice-free part of a lake basin still touching ice (no lake drawn: not modelled).
pub const BASIN_AGAINST_ICE: [u8; 3] = [158, 200, 196];

/// Steep bare ground: dark vermillion.
pub const STEEP_BARE: [u8; 3] = [170, 62, 18];

/// The caution of the lake and slope layers.
pub const ANALYSIS_CAUTION: &str = "Planning-level indication, not a hazard assessment: \
glacial lakes may drain suddenly (outburst floods) and steep moraine may fail; for either, \
consult local authorities and qualified professionals.";

/// Flat colour of ice where a layer describes the ground, not the ice.
pub const ICE_FLAT: [u8; 3] = [216, 233, 243];

/// Glacier domain: ice-free ground where the balance may add ice (a muted violet, apart from
/// the ice blues and the ground greys).
pub const DOMAIN_GROUND: [u8; 3] = [150, 128, 196];

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
    /// New lakes: fill depth of ice-free depressions of the bed, m ([`crate::view::lakes`]).
    Lakes,
    /// Steep bare ground, one class ([`crate::view::steep_ground`]).
    SteepBare,
    /// The glacier domain, where the balance may add ice ([`crate::ice::glacier_domain`]).
    Domain,
}

impl LayerKind {
    /// Parses the name the page uses.
    pub fn from_name(name: &str) -> Option<LayerKind> {
        match name {
            "ice_thickness" => Some(LayerKind::IceThickness),
            "exposure_year" => Some(LayerKind::ExposureYear),
            "stage" => Some(LayerKind::Stage),
            "soil" => Some(LayerKind::Soil),
            "lakes" => Some(LayerKind::Lakes),
            "steep_bare" => Some(LayerKind::SteepBare),
            "glacier_domain" => Some(LayerKind::Domain),
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
    /// What the lake and slope layers need of the bed, found once.
    bed: Option<BedAnalyses>,
}

/// The parts of the lake and slope layers that do not change from year to year.
#[derive(Clone, Debug)]
struct BedAnalyses {
    lakes: LakeMap,
    /// Cells at least [`STEEP_SLOPE_DEG`] steep.
    steep: Vec<u32>,
    /// Pale relief as RGBA bytes of the whole grid.
    pale_ground_rgba: Vec<u8>,
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
            bed: None,
        }
    }

    /// Adds the lake and slope layers of `bed` (the ground under the starting ice of
    /// `timeline`) with its Horn slope `slope_deg`: finds the new lakes and the steep cells
    /// once, so a draw only checks them against the year's ice and stages.
    pub fn with_bed_analyses(
        mut self,
        bed: &Grid,
        slope_deg: &[f32],
        timeline: &Timeline,
    ) -> LayerRenderer {
        if bed.values.len() != self.light.len() {
            return self;
        }
        let mut pale_ground_rgba = vec![0; 4 * self.light.len()];
        for (idx, &l) in self.light.iter().enumerate() {
            put(&mut pale_ground_rgba, idx, PALE_GREY, pale(l));
        }
        self.bed = Some(BedAnalyses {
            lakes: LakeMap::new_lakes(bed, timeline),
            steep: steep_ground::steep_cells(bed, slope_deg),
            pale_ground_rgba,
        });
        self
    }

    /// The lakes found at load, if the renderer was given the bed.
    pub fn lake_map(&self) -> Option<&LakeMap> {
        self.bed.as_ref().map(|b| &b.lakes)
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
        if let (LayerKind::Lakes | LayerKind::SteepBare | LayerKind::Domain, Some(bed)) =
            (kind, &self.bed)
        {
            rgba.extend_from_slice(&bed.pale_ground_rgba);
        } else {
            rgba.extend_from_slice(&self.ground_rgba);
        }
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
            LayerKind::Lakes => {
                let Some(bed) = &self.bed else { return };
                timeline.for_each_ice_cell(year, |idx, _| put(rgba, idx, ICE_FLAT, light[idx]));
                let lut = lut(LAKE_RAMP);
                let to_index = 255.0 / LAKE_DEPTH_SCALE_M;
                for lake in &bed.lakes.lakes {
                    if LakeMap::is_ice_free(lake, timeline, year) {
                        for &c in &lake.cells {
                            let c = c as usize;
                            let depth = bed.lakes.depth_m[c];
                            put(rgba, c, lut[((depth * to_index) as usize).min(255)], 256);
                        }
                    } else {
                        for &c in &lake.cells {
                            let c = c as usize;
                            if !timeline.cover_at(c, year).0 {
                                put(rgba, c, BASIN_AGAINST_ICE, pale(light[c]));
                            }
                        }
                    }
                }
            }
            LayerKind::Domain => {
                if let Some(start) = timeline.run_start() {
                    for (idx, &inside) in start.domain.iter().enumerate() {
                        if inside {
                            put(rgba, idx, DOMAIN_GROUND, pale(light[idx]));
                        }
                    }
                }
                timeline.for_each_ice_cell(year, |idx, _| put(rgba, idx, ICE_FLAT, light[idx]));
            }
            LayerKind::SteepBare => {
                let Some(bed) = &self.bed else { return };
                timeline.for_each_ice_cell(year, |idx, _| put(rgba, idx, ICE_FLAT, light[idx]));
                timeline.fill_stage(year, &mut self.stage);
                steep_ground::for_each_steep_bare(&bed.steep, &self.stage, |c| {
                    put(rgba, c, STEEP_BARE, pale(light[c]));
                });
            }
        }
    }
}

/// Grey of the pale relief under the lake and slope layers, before shading.
const PALE_GREY: [u8; 3] = [218, 216, 212];

/// Light of the pale relief: half the ordinary relief's contrast, so shadows never
/// reach the darkness of [`STEEP_BARE`] (1/256 units; 0 stays nodata).
#[inline]
fn pale(light: u16) -> u16 {
    if light == 0 {
        0
    } else {
        256 - (256 - light.min(256)) / 2
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
                title: "Exposure year".into(),
                unit: "year".into(),
                min: f64::from(first),
                max: f64::from(last),
                stops: ramp_stops(EXPOSURE_RAMP, f64::from(first), f64::from(last)),
                classes: vec![
                    class("under ice", ICE_FLAT),
                    class("ice-free at the start", GROUND_GREY),
                ],
                note: "Year the ground became ice-free (the latest, if ice came back). In the \
                       files: -1 ice-free at the start, no value under ice."
                    .into(),
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
                note: "Share of the cell covered, in 0.4 % steps; the run keeps cover every few \
                       years and draws the years between by interpolation."
                    .into(),
            }
        }
        LayerKind::Soil => LayerLegend {
            title: "Soil development".into(),
            unit: "index".into(),
            min: 0.0,
            max: 1.0,
            stops: ramp_stops(SOIL_RAMP, 0.0, 1.0),
            classes: vec![class("under ice", ICE_FLAT)],
            note: "0 raw till (the unsorted rock debris a glacier leaves), 1 mature soil.".into(),
        },
        LayerKind::Lakes => LayerLegend {
            title: "New lakes (potential), depth".into(),
            unit: "m".into(),
            min: 0.0,
            max: f64::from(LAKE_DEPTH_SCALE_M),
            stops: ramp_stops(LAKE_RAMP, 0.0, f64::from(LAKE_DEPTH_SCALE_M)),
            classes: vec![
                class(
                    "basin still against ice (lake not modelled)",
                    BASIN_AGAINST_ICE,
                ),
                class("ice", ICE_FLAT),
                class("other ground", PALE_GREY),
            ],
            note: format!(
                "{ANALYSIS_CAUTION} Depressions of the bed at least {} m deep and {} km2 \
                 where the run had ice, filled to their spill level; shown once they and their \
                 shore are ice-free. Lakes under or against ice, dam breaches and infill are \
                 not modelled. Darkest blue: {:.0} m or deeper.",
                crate::view::lakes::MIN_LAKE_DEPTH_M,
                crate::view::lakes::MIN_LAKE_AREA_M2 / 1e6,
                LAKE_DEPTH_SCALE_M
            ),
        },
        LayerKind::Domain => LayerLegend {
            title: "Glacier domain".into(),
            unit: String::new(),
            min: 0.0,
            max: 0.0,
            stops: Vec::new(),
            classes: vec![
                class("ice-free ground where snow may build ice", DOMAIN_GROUND),
                class("ice", ICE_FLAT),
                class("ground where the balance only melts", PALE_GREY),
            ],
            note: "The surface balance adds ice only inside the domain: by default the \
                   starting ice and the ground whose flow path drains into it. Ice may still \
                   flow out of it and melt there."
                .into(),
        },
        LayerKind::SteepBare => LayerLegend {
            title: "Steep bare ground".into(),
            unit: String::new(),
            min: 0.0,
            max: 0.0,
            stops: Vec::new(),
            classes: vec![
                class(
                    &format!("{STEEP_SLOPE_DEG:.0} degrees or steeper, bare or pioneer"),
                    STEEP_BARE,
                ),
                class("ice", ICE_FLAT),
                class("other ground", PALE_GREY),
            ],
            note: format!(
                "{ANALYSIS_CAUTION} Slope of the bed by Horn's method, averaged over the \
                 grid's cells: narrower steep steps do not show."
            ),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::run::recorder::TimelineRecorder;
    use crate::run::timeline::DEFAULT_FRAME_BUDGET_BYTES;
    use crate::view::render::cie_lightness as lightness;

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
        check_monotonic(LAKE_RAMP, false);
        for ramp in [ICE_RAMP, EXPOSURE_RAMP, COVER_RAMP, SOIL_RAMP, LAKE_RAMP] {
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
    fn steep_bare_is_darker_than_the_pale_relief_in_its_deepest_shadow() {
        let shadow = pale(((SHADE_FLOOR * 256.0).round()) as u16);
        let darkest_ground = PALE_GREY.map(|c| ((u32::from(c) * u32::from(shadow)) >> 8) as u8);
        let brightest_steep = lightness(STEEP_BARE);
        assert!(lightness(darkest_ground) - brightest_steep > 10.0);
    }

    #[test]
    fn a_lake_shows_once_it_and_its_shore_are_ice_free() {
        // 5 x 5 bed of 10 m cells with a one-cell pit 3 m deep at the centre; ice covers the
        // pit until 2001 and its east neighbour (the shore) until 2002.
        let geometry = crate::base::grid::GridGeometry {
            n_cols: 5,
            n_rows: 5,
            cell_size_m: 10.0,
            west_m: 0.0,
            north_m: 0.0,
            epsg: None,
        };
        let mut bed = Grid::filled(geometry, 100.0);
        bed.values[12] = 97.0;
        let mut ice = vec![0.0_f32; 25];
        ice[12] = 20.0;
        ice[13] = 20.0;
        let mut recorder = TimelineRecorder::new(25, 2000, 1, &ice, DEFAULT_FRAME_BUDGET_BYTES);
        ice[12] = 0.0;
        recorder.record_year(2001, &ice);
        ice[13] = 0.0;
        recorder.record_year(2002, &ice);
        let timeline = recorder.finish(&ice);
        let slope = vec![0.0; 25];
        let lakes = crate::view::lakes::LakeMap::from_bed_with(&bed, 1.0, 100.0);
        assert_eq!(lakes.lakes.len(), 1);
        let mut renderer = LayerRenderer::new(&[1.0; 25], &[false; 25]);
        renderer.bed = Some(BedAnalyses {
            lakes,
            steep: steep_ground::steep_cells(&bed, &slope),
            pale_ground_rgba: vec![0; 100],
        });
        let mut rgba = Vec::new();
        let at = |rgba: &Vec<u8>, idx: usize| [rgba[4 * idx], rgba[4 * idx + 1], rgba[4 * idx + 2]];
        renderer.render(&timeline, LayerKind::Lakes, 2000, &mut rgba);
        assert_eq!(at(&rgba, 12), ICE_FLAT);
        renderer.render(&timeline, LayerKind::Lakes, 2001, &mut rgba);
        assert_eq!(at(&rgba, 12), BASIN_AGAINST_ICE);
        renderer.render(&timeline, LayerKind::Lakes, 2002, &mut rgba);
        // 3 m on a 50 m scale, unshaded.
        let expected = LAKE_RAMP.at(((3.0 * 255.0 / LAKE_DEPTH_SCALE_M) as usize) as f32 / 255.0);
        assert_eq!(at(&rgba, 12), expected);
        assert!(legend(&timeline, LayerKind::Lakes)
            .note
            .contains("outburst floods"));
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
