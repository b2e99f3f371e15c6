//! A map snapshot as PNG (ISO/IEC 15948, through the `image` crate): the layer drawn by
//! [`LayerRenderer::render`] at one pixel per cell, framed by the scenario name, layer and
//! year above, the legend (in the layer's units), a scale bar and a north arrow beside, and
//! the caution and provenance below. Text is the public-domain 8 x 8 bitmap font of the
//! `font8x8` crate scaled up twice, so no font file is needed and every platform draws the
//! same pixels.

use font8x8::{UnicodeFonts, BASIC_FONTS, LATIN_FONTS};

use super::{check_layer, check_run, ExportError, ExportMeta, CAUTION};
use crate::base::grid::Grid;
use crate::run::timeline::Timeline;
use crate::view::layers::{self, LayerKind, LayerLegend, LayerRenderer};
use crate::view::render::encode_png_with_text;

/// Font scale: 8 x 8 glyphs drawn as 16 x 16 pixels.
const SCALE: usize = 2;
const CHAR_W: usize = 8 * SCALE;
const LINE_H: usize = 10 * SCALE;
const MARGIN: usize = 16;
/// Characters per line in the side panel.
const PANEL_CHARS: usize = 22;
const PANEL_W: usize = PANEL_CHARS * CHAR_W;
const BAR_W: usize = 24;
const BAR_H: usize = 160;
const SWATCH: usize = 16;

const WHITE: [u8; 3] = [255, 255, 255];
const INK: [u8; 3] = [32, 32, 32];
const GREY_INK: [u8; 3] = [90, 90, 90];
const CAUTION_INK: [u8; 3] = [140, 40, 20];

/// A snapshot and where the map lies in it.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Snapshot {
    pub png: Vec<u8>,
    pub width: usize,
    pub height: usize,
    /// Top-left pixel of the map; the map is `n_cols` x `n_rows` pixels, one per cell.
    pub map_x: usize,
    pub map_y: usize,
}

/// An opaque RGB canvas kept as RGBA for the encoder.
struct Canvas {
    width: usize,
    height: usize,
    rgba: Vec<u8>,
}

impl Canvas {
    fn new(width: usize, height: usize) -> Canvas {
        Canvas {
            width,
            height,
            rgba: [255, 255, 255, 255].repeat(width * height),
        }
    }

    fn put(&mut self, x: usize, y: usize, rgb: [u8; 3]) {
        if x < self.width && y < self.height {
            let i = 4 * (y * self.width + x);
            self.rgba[i..i + 3].copy_from_slice(&rgb);
        }
    }

    fn fill(&mut self, x: usize, y: usize, w: usize, h: usize, rgb: [u8; 3]) {
        for yy in y..y + h {
            for xx in x..x + w {
                self.put(xx, yy, rgb);
            }
        }
    }

    /// A one-pixel frame just outside the rectangle.
    fn frame(&mut self, x: usize, y: usize, w: usize, h: usize, rgb: [u8; 3]) {
        let (x0, y0) = (x.saturating_sub(1), y.saturating_sub(1));
        self.fill(x0, y0, w + 2, 1, rgb);
        self.fill(x0, y + h, w + 2, 1, rgb);
        self.fill(x0, y0, 1, h + 2, rgb);
        self.fill(x + w, y0, 1, h + 2, rgb);
    }

    fn text(&mut self, x: usize, y: usize, text: &str, rgb: [u8; 3]) {
        for (k, c) in text.chars().enumerate() {
            let glyph = BASIC_FONTS
                .get(c)
                .or_else(|| LATIN_FONTS.get(c))
                .or_else(|| BASIC_FONTS.get('?'))
                .unwrap_or([0; 8]);
            for (gy, bits) in glyph.iter().enumerate() {
                for gx in 0..8 {
                    if bits & (1 << gx) != 0 {
                        self.fill(
                            x + k * CHAR_W + gx * SCALE,
                            y + gy * SCALE,
                            SCALE,
                            SCALE,
                            rgb,
                        );
                    }
                }
            }
        }
    }
}

/// Words of `text` in lines of at most `width` characters (longer words are cut).
fn wrap(text: &str, width: usize) -> Vec<String> {
    let width = width.max(1);
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in super::one_line(text).split_whitespace() {
        let mut word: Vec<char> = word.chars().collect();
        while word.len() > width {
            if !line.is_empty() {
                lines.push(std::mem::take(&mut line));
            }
            lines.push(word[..width].iter().collect());
            word.drain(..width);
        }
        let word: String = word.into_iter().collect();
        let needed = line.chars().count() + usize::from(!line.is_empty()) + word.chars().count();
        if needed > width && !line.is_empty() {
            lines.push(std::mem::take(&mut line));
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(&word);
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines
}

/// Colour of a legend ramp at `value`, linear in sRGB between stops (as the ramp itself).
fn legend_colour(legend: &LayerLegend, value: f64) -> [u8; 3] {
    let stops = &legend.stops;
    let Some(last) = stops.last() else {
        return WHITE;
    };
    for pair in stops.windows(2) {
        let (a, b) = (&pair[0], &pair[1]);
        if value <= b.value {
            let w = if b.value > a.value {
                ((value - a.value) / (b.value - a.value)).clamp(0.0, 1.0)
            } else {
                0.0
            };
            return [0, 1, 2].map(|k| {
                (f64::from(a.rgb[k]) + w * (f64::from(b.rgb[k]) - f64::from(a.rgb[k]))).round()
                    as u8
            });
        }
    }
    last.rgb
}

/// A legend value as text: whole years, whole numbers over wide ranges, else two decimals.
fn legend_value(legend: &LayerLegend, value: f64) -> String {
    if legend.unit == "year" || legend.max - legend.min >= 10.0 {
        format!("{value:.0}")
    } else {
        format!("{value:.2}")
    }
}

/// The longest 1, 2 or 5 times a power of ten metres that fits in `max_px` pixels of
/// `cell_size_m` each.
fn scale_bar_m(cell_size_m: f64, max_px: usize) -> f64 {
    let max_m = cell_size_m * max_px as f64;
    let mut best = 0.0;
    let mut power = 1e-3;
    while power <= max_m {
        for step in [1.0, 2.0, 5.0] {
            let length = step * power;
            if length <= max_m {
                best = length;
            }
        }
        power *= 10.0;
    }
    best
}

fn distance_label(metres: f64) -> String {
    if metres >= 1000.0 {
        format!("{} km", metres / 1000.0)
    } else {
        format!("{metres} m")
    }
}

/// Draws the side panel from `(x, y)`; returns the height used. With `canvas` `None` it
/// only measures.
fn panel(
    canvas: &mut Option<&mut Canvas>,
    x: usize,
    y: usize,
    legend: &LayerLegend,
    cell_size_m: f64,
    epsg: Option<u32>,
) -> usize {
    let mut cy = y;
    let text = |canvas: &mut Option<&mut Canvas>, cy: &mut usize, line: &str, rgb| {
        if let Some(c) = canvas.as_deref_mut() {
            c.text(x, *cy, line, rgb);
        }
        *cy += LINE_H;
    };
    // "Exposure year (year)" would say it twice.
    let title = if legend.unit.is_empty() || legend.unit == "year" {
        legend.title.clone()
    } else {
        format!("{} ({})", legend.title, legend.unit)
    };
    for line in wrap(&title, PANEL_CHARS) {
        text(canvas, &mut cy, &line, INK);
    }
    cy += LINE_H / 2;
    if !legend.stops.is_empty() {
        let span = legend.max - legend.min;
        if let Some(c) = canvas.as_deref_mut() {
            for py in 0..BAR_H {
                // Top of the bar is the maximum.
                let t = 1.0 - py as f64 / (BAR_H - 1) as f64;
                c.fill(
                    x,
                    cy + py,
                    BAR_W,
                    1,
                    legend_colour(legend, legend.min + t * span),
                );
            }
            c.frame(x, cy, BAR_W, BAR_H, INK);
            for stop in &legend.stops {
                let t = if span > 0.0 {
                    (stop.value - legend.min) / span
                } else {
                    0.0
                };
                let py = cy + ((1.0 - t) * (BAR_H - 1) as f64).round() as usize;
                c.fill(x + BAR_W, py, 6, 1, INK);
                let label_y = (py + 1)
                    .saturating_sub(CHAR_W / 2)
                    .max(cy.saturating_sub(2));
                c.text(
                    x + BAR_W + 10,
                    label_y,
                    &legend_value(legend, stop.value),
                    INK,
                );
            }
        }
        cy += BAR_H + LINE_H;
    }
    for class in &legend.classes {
        let lines = wrap(&class.label, PANEL_CHARS - 2);
        if let Some(c) = canvas.as_deref_mut() {
            c.fill(x, cy, SWATCH, SWATCH, class.rgb);
            c.frame(x, cy, SWATCH, SWATCH, INK);
            for (k, line) in lines.iter().enumerate() {
                c.text(x + 2 * CHAR_W, cy + k * LINE_H, line, INK);
            }
        }
        cy += LINE_H * lines.len().max(1) + 4;
    }
    cy += LINE_H / 2;
    for line in wrap(&legend.note, PANEL_CHARS) {
        text(canvas, &mut cy, &line, GREY_INK);
    }
    cy += LINE_H;

    // Scale bar: one map pixel is one cell.
    let bar_m = scale_bar_m(cell_size_m, PANEL_W - CHAR_W);
    let bar_px = (bar_m / cell_size_m).round() as usize;
    text(canvas, &mut cy, "Scale", INK);
    if let Some(c) = canvas.as_deref_mut() {
        let half = bar_px / 2;
        c.fill(x, cy + 4, half, 8, INK);
        c.fill(x + half, cy + 4, bar_px - half, 8, WHITE);
        c.frame(x, cy + 4, bar_px, 8, INK);
        let label = distance_label(bar_m);
        c.text(x, cy + 16, "0", INK);
        let label_x = (x + bar_px)
            .saturating_sub(label.chars().count() * CHAR_W)
            .max(x + 2 * CHAR_W);
        c.text(label_x, cy + 16, &label, INK);
    }
    cy += 16 + LINE_H + 4;
    let pixel_note = format!("1 pixel = {} m", cell_size_m);
    text(canvas, &mut cy, &pixel_note, GREY_INK);
    let crs = epsg.map_or("CRS not stated".to_string(), |c| format!("EPSG:{c}"));
    text(canvas, &mut cy, &crs, GREY_INK);
    cy += LINE_H / 2;

    // North arrow: the grid is north-up.
    let arrow_h = 40;
    let arrow_w = 24;
    if let Some(c) = canvas.as_deref_mut() {
        c.text(x + arrow_w / 2 - CHAR_W / 2, cy, "N", INK);
        let top = cy + LINE_H;
        for dy in 0..arrow_h {
            let half = (dy * arrow_w / 2) / arrow_h;
            let mid = x + arrow_w / 2;
            c.fill(mid - half, top + dy, half, 1, INK);
            c.put(mid + half, top + dy, INK);
        }
        c.fill(x, top + arrow_h, arrow_w + 1, 1, INK);
        c.text(
            x + arrow_w + CHAR_W,
            top + arrow_h / 2 - CHAR_W / 2,
            "grid north",
            GREY_INK,
        );
    }
    cy += LINE_H + arrow_h + 4;
    cy - y
}

/// The snapshot of `kind` at the end of `year`. `renderer` is the one the map uses
/// ([`super::bed_renderer`]); the map part is exactly what it draws.
pub fn snapshot_png(
    timeline: &Timeline,
    renderer: &mut LayerRenderer,
    dem: &Grid,
    meta: &ExportMeta,
    kind: LayerKind,
    year: i32,
) -> Result<Snapshot, ExportError> {
    check_run(timeline, dem, year)?;
    check_layer(timeline, kind)?;
    let g = &dem.geometry;
    let (map_w, map_h) = (g.n_cols, g.n_rows);
    let legend = layers::legend(timeline, kind);
    let width = MARGIN + map_w + 2 * MARGIN + PANEL_W + MARGIN;
    let full_chars = (width - 2 * MARGIN) / CHAR_W;

    let mut heading = wrap(&meta.scenario_name, full_chars);
    let layer_line = format!("{}, end of year {}", legend.title, year);
    let layer_lines = wrap(&layer_line, full_chars);
    let top_h = MARGIN + (heading.len() + layer_lines.len()) * LINE_H + MARGIN / 2;
    let panel_h = panel(&mut None, 0, 0, &legend, g.cell_size_m, g.epsg);
    let body_h = map_h.max(panel_h);
    let caution_lines = wrap(CAUTION, full_chars);
    let mut footer = caution_lines.clone();
    footer.extend(wrap(
        &format!(
            "Seed {}; Forefield engine {}; {} x {} cells of {} m, one pixel per cell.",
            meta.seed, meta.engine_version, map_w, map_h, g.cell_size_m
        ),
        full_chars,
    ));
    let height = top_h + body_h + MARGIN + footer.len() * LINE_H + MARGIN;

    let mut canvas = Canvas::new(width, height);
    let mut cy = MARGIN;
    for line in heading.drain(..) {
        canvas.text(MARGIN, cy, &line, INK);
        cy += LINE_H;
    }
    for line in &layer_lines {
        canvas.text(MARGIN, cy, line, GREY_INK);
        cy += LINE_H;
    }

    let (map_x, map_y) = (MARGIN, top_h);
    let mut map = Vec::new();
    renderer.render(timeline, kind, year, &mut map);
    for row in 0..map_h {
        for col in 0..map_w {
            let i = 4 * (row * map_w + col);
            if map.get(i + 3).copied().unwrap_or(0) != 0 {
                canvas.put(map_x + col, map_y + row, [map[i], map[i + 1], map[i + 2]]);
            }
        }
    }
    canvas.frame(map_x, map_y, map_w, map_h, INK);
    panel(
        &mut Some(&mut canvas),
        map_x + map_w + 2 * MARGIN,
        top_h,
        &legend,
        g.cell_size_m,
        g.epsg,
    );
    let mut fy = top_h + body_h + MARGIN;
    for (k, line) in footer.iter().enumerate() {
        let ink = if k < caution_lines.len() {
            CAUTION_INK
        } else {
            GREY_INK
        };
        canvas.text(MARGIN, fy, line, ink);
        fy += LINE_H;
    }
    let title = format!("{}, end of year {year}", legend.title);
    let source = meta.provenance();
    let text = [
        ("Title", title.as_str()),
        ("Source", source.as_str()),
        ("Disclaimer", CAUTION),
    ];
    let png = encode_png_with_text(&canvas.rgba, width, height, &text).map_err(|e| {
        ExportError::Encode {
            format: "PNG",
            message: e.to_string(),
        }
    })?;
    Ok(Snapshot {
        png,
        width,
        height,
        map_x,
        map_y,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wraps_words_and_cuts_long_ones() {
        assert_eq!(wrap("a bb ccc", 4), vec!["a bb", "ccc"]);
        assert_eq!(wrap("abcdefgh", 3), vec!["abc", "def", "gh"]);
    }

    #[test]
    fn scale_bar_is_a_round_length_that_fits() {
        assert_eq!(scale_bar_m(25.0, 336), 5000.0);
        assert_eq!(scale_bar_m(10.0, 336), 2000.0);
        assert_eq!(distance_label(500.0), "500 m");
        assert_eq!(distance_label(5000.0), "5 km");
    }
}
