//! Map rendering into RGBA buffers: colour ramps blended over Horn hillshade, and legends.
//!
//! The elevation ramp is our own design: its CIE L* rises monotonically from low to high
//! ground, so it reads in greyscale print and for the common colour-vision deficiencies
//! (lightness carries the order; hue only adds character).

use serde::Serialize;

use crate::base::grid::Grid;

/// A colour ramp: stops at increasing positions in [0, 1], linear in sRGB between them.
#[derive(Clone, Copy, Debug)]
pub struct ColorRamp {
    pub stops: &'static [(f32, [u8; 3])],
}

/// Elevation: deep teal valley floors through green and ochre to pale summits.
pub const ELEVATION_RAMP: ColorRamp = ColorRamp {
    stops: &[
        (0.0, [38, 70, 83]),
        (0.2, [42, 110, 96]),
        (0.4, [103, 140, 88]),
        (0.6, [170, 160, 104]),
        (0.8, [204, 180, 150]),
        (1.0, [245, 242, 236]),
    ],
};

impl ColorRamp {
    /// Colour at position `t` (clamped to [0, 1]).
    pub fn at(&self, t: f32) -> [u8; 3] {
        let t = if t.is_nan() { 0.0 } else { t.clamp(0.0, 1.0) };
        let stops = self.stops;
        for pair in stops.windows(2) {
            let ((t0, c0), (t1, c1)) = (pair[0], pair[1]);
            if t <= t1 {
                let w = if t1 > t0 { (t - t0) / (t1 - t0) } else { 0.0 };
                return [0, 1, 2].map(|k| {
                    (f32::from(c0[k]) + w * (f32::from(c1[k]) - f32::from(c0[k]))).round() as u8
                });
            }
        }
        stops[stops.len() - 1].1
    }
}

/// A continuous legend: title, unit, value range and colour stops in value units.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Legend {
    pub title: String,
    pub unit: String,
    pub min: f64,
    pub max: f64,
    pub stops: Vec<LegendStop>,
}

#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct LegendStop {
    pub value: f64,
    pub rgb: [u8; 3],
}

impl Legend {
    pub fn continuous(title: &str, unit: &str, min: f64, max: f64, ramp: ColorRamp) -> Legend {
        let stops = ramp
            .stops
            .iter()
            .map(|&(t, rgb)| LegendStop {
                value: min + f64::from(t) * (max - min),
                rgb,
            })
            .collect();
        Legend {
            title: title.into(),
            unit: unit.into(),
            min,
            max,
            stops,
        }
    }
}

/// Share of the colour kept in full shadow: low enough to show relief, high enough that the
/// ramp colour stays readable on shaded slopes (common practice, no source).
const SHADE_FLOOR: f32 = 0.45;

/// Fills `rgba` (4 bytes per cell, resized as needed) with `layer` coloured by `ramp` over
/// `lo..hi`, modulated by `hillshade` in [0, 1]. Nodata cells are transparent.
pub fn render_shaded(
    layer: &Grid,
    hillshade: &[f32],
    ramp: ColorRamp,
    lo: f32,
    hi: f32,
    rgba: &mut Vec<u8>,
) {
    let n = layer.geometry.n_cells();
    rgba.resize(4 * n, 0);
    let span = if hi > lo { hi - lo } else { 1.0 };
    for (idx, pixel) in rgba.chunks_exact_mut(4).enumerate() {
        if layer.nodata[idx] {
            pixel.copy_from_slice(&[0, 0, 0, 0]);
            continue;
        }
        let colour = ramp.at((layer.values[idx] - lo) / span);
        let shade = hillshade
            .get(idx)
            .copied()
            .filter(|s| s.is_finite())
            .unwrap_or(1.0);
        let light = SHADE_FLOOR + (1.0 - SHADE_FLOOR) * shade.clamp(0.0, 1.0);
        pixel[0] = (f32::from(colour[0]) * light).round() as u8;
        pixel[1] = (f32::from(colour[1]) * light).round() as u8;
        pixel[2] = (f32::from(colour[2]) * light).round() as u8;
        pixel[3] = 255;
    }
}

/// Error from PNG encoding.
#[derive(Debug, thiserror::Error)]
#[error("cannot encode PNG: {0}")]
pub struct PngError(String);

/// Encodes an RGBA buffer as PNG bytes.
pub fn encode_png(rgba: &[u8], width: usize, height: usize) -> Result<Vec<u8>, PngError> {
    encode_png_with_text(rgba, width, height, &[])
}

/// Encodes an RGBA buffer as PNG bytes with `(keyword, text)` pairs as iTXt chunks (UTF-8;
/// PNG 3rd edition, 11.3.3.5). Keywords should be the registered ones (e.g. `Title`,
/// `Description`, `Source`, `Disclaimer`, `Software`), which image viewers show.
pub fn encode_png_with_text(
    rgba: &[u8],
    width: usize,
    height: usize,
    text: &[(&str, &str)],
) -> Result<Vec<u8>, PngError> {
    let mut out = Vec::new();
    let mut encoder = png::Encoder::new(&mut out, width as u32, height as u32);
    encoder.set_color(png::ColorType::Rgba);
    encoder.set_depth(png::BitDepth::Eight);
    for (keyword, value) in text {
        encoder
            .add_itxt_chunk(keyword.to_string(), value.to_string())
            .map_err(|e| PngError(e.to_string()))?;
    }
    let mut writer = encoder
        .write_header()
        .map_err(|e| PngError(e.to_string()))?;
    writer
        .write_image_data(rgba)
        .map_err(|e| PngError(e.to_string()))?;
    writer.finish().map_err(|e| PngError(e.to_string()))?;
    Ok(out)
}

/// CIE L* of an sRGB colour (IEC 61966-2-1 transfer, D65 white; CIE 15:2004), for checking
/// that ramps rise in lightness.
#[cfg(test)]
pub(crate) fn cie_lightness(rgb: [u8; 3]) -> f64 {
    let lin = |c: u8| {
        let c = f64::from(c) / 255.0;
        if c <= 0.04045 {
            c / 12.92
        } else {
            ((c + 0.055) / 1.055).powf(2.4)
        }
    };
    let y = 0.2126 * lin(rgb[0]) + 0.7152 * lin(rgb[1]) + 0.0722 * lin(rgb[2]);
    if y > 216.0 / 24389.0 {
        116.0 * y.cbrt() - 16.0
    } else {
        y * 24389.0 / 27.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::view::render::cie_lightness as lightness;

    #[test]
    fn elevation_ramp_lightness_rises_monotonically() {
        let mut last = -1.0;
        for step in 0..=100 {
            let l = lightness(ELEVATION_RAMP.at(step as f32 / 100.0));
            assert!(l > last, "L* falls at step {step}: {l} after {last}");
            last = l;
        }
    }

    #[test]
    fn ramp_hits_its_stops() {
        assert_eq!(ELEVATION_RAMP.at(0.0), [38, 70, 83]);
        assert_eq!(ELEVATION_RAMP.at(1.0), [245, 242, 236]);
        assert_eq!(ELEVATION_RAMP.at(2.0), [245, 242, 236]);
    }
}
