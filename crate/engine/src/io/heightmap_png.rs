//! 16-bit greyscale PNG height maps with a JSON sidecar giving georeference and vertical scale.
//!
//! The sidecar (same name with `.json`) holds `west_m`, `north_m`, `cell_size_m`, optional
//! `epsg`, `vertical_scale_m` (metres per grey level), `vertical_offset_m` and an optional
//! `nodata_level`. Elevation = `vertical_offset_m + vertical_scale_m * level`.

use std::io::Cursor;

use image::{DynamicImage, ImageFormat, ImageReader};
use serde::{Deserialize, Serialize};

use crate::base::grid::{Grid, GridGeometry, MAX_CELLS};
use crate::base::load_error::{LoadError, LoadProblem};

/// Georeference and vertical scale for a PNG height map.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct HeightmapSidecar {
    pub west_m: f64,
    pub north_m: f64,
    pub cell_size_m: f64,
    #[serde(default)]
    pub epsg: Option<u32>,
    pub vertical_scale_m: f64,
    #[serde(default)]
    pub vertical_offset_m: f64,
    #[serde(default)]
    pub nodata_level: Option<u16>,
}

/// Reads a 16-bit greyscale PNG and its sidecar JSON text into a grid of elevations (m).
pub fn read_heightmap_png(
    png_bytes: &[u8],
    sidecar_json: &str,
    source_name: &str,
) -> Result<Grid, LoadError> {
    read(png_bytes, sidecar_json).map_err(|problem| LoadError::new(source_name, problem))
}

fn read(png_bytes: &[u8], sidecar_json: &str) -> Result<Grid, LoadProblem> {
    let sidecar: HeightmapSidecar =
        serde_json::from_str(sidecar_json).map_err(|e| LoadProblem::BadSidecar(e.to_string()))?;
    if !(sidecar.cell_size_m.is_finite() && sidecar.cell_size_m > 0.0) {
        return Err(LoadProblem::BadCellSize(sidecar.cell_size_m));
    }
    if !(sidecar.vertical_scale_m.is_finite() && sidecar.vertical_scale_m > 0.0) {
        return Err(LoadProblem::BadSidecar(format!(
            "vertical_scale_m {} must be a positive number of metres per grey level",
            sidecar.vertical_scale_m
        )));
    }
    if !(sidecar.west_m.is_finite() && sidecar.north_m.is_finite()) {
        return Err(LoadProblem::BadSidecar(
            "west_m and north_m must be finite".into(),
        ));
    }
    let reader = ImageReader::with_format(Cursor::new(png_bytes), ImageFormat::Png);
    let (n_cols, n_rows) = reader
        .into_dimensions()
        .map_err(|e| LoadProblem::BadPng(e.to_string()))?;
    let (n_cols, n_rows) = (n_cols as usize, n_rows as usize);
    let cells = n_cols * n_rows;
    if cells > MAX_CELLS {
        return Err(LoadProblem::TooLarge {
            n_cols,
            n_rows,
            cells,
            limit: MAX_CELLS,
        });
    }
    if n_cols < 3 || n_rows < 3 {
        return Err(LoadProblem::TooSmall { n_cols, n_rows });
    }
    let image = ImageReader::with_format(Cursor::new(png_bytes), ImageFormat::Png)
        .decode()
        .map_err(|e| LoadProblem::BadPng(e.to_string()))?;
    let levels = match image {
        DynamicImage::ImageLuma16(buffer) => buffer.into_raw(),
        other => return Err(LoadProblem::PngNotGrey16(format!("{:?}", other.color()))),
    };
    let geometry = GridGeometry {
        n_cols,
        n_rows,
        cell_size_m: sidecar.cell_size_m,
        west_m: sidecar.west_m,
        north_m: sidecar.north_m,
        epsg: sidecar.epsg,
    };
    let nodata: Vec<bool> = levels
        .iter()
        .map(|&l| Some(l) == sidecar.nodata_level)
        .collect();
    let values = levels
        .iter()
        .zip(&nodata)
        .map(|(&l, &missing)| {
            if missing {
                f32::NAN
            } else {
                (sidecar.vertical_offset_m + sidecar.vertical_scale_m * f64::from(l)) as f32
            }
        })
        .collect();
    if nodata.iter().all(|&m| m) {
        return Err(LoadProblem::AllNodata);
    }
    Ok(Grid {
        geometry,
        values,
        nodata,
        nodata_value: None,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use image::{ImageBuffer, Luma};

    fn png(levels: &[u16], w: u32, h: u32) -> Vec<u8> {
        let buffer: ImageBuffer<Luma<u16>, Vec<u16>> =
            ImageBuffer::from_raw(w, h, levels.to_vec()).unwrap();
        let mut out = Cursor::new(Vec::new());
        buffer.write_to(&mut out, ImageFormat::Png).unwrap();
        out.into_inner()
    }

    const SIDECAR: &str = r#"{"west_m": 400000, "north_m": 5200000, "cell_size_m": 10,
        "epsg": 32632, "vertical_scale_m": 0.1, "vertical_offset_m": 1000, "nodata_level": 0}"#;

    #[test]
    fn levels_scale_to_metres_and_nodata_is_masked() {
        let levels: Vec<u16> = (0..12).map(|i| i * 100).collect();
        let grid = read_heightmap_png(&png(&levels, 4, 3), SIDECAR, "h.png").unwrap();
        assert_eq!(grid.geometry.n_cols, 4);
        assert_eq!(grid.geometry.epsg, Some(32632));
        assert_eq!(grid.get(0, 0), None);
        assert_eq!(grid.get(1, 0), Some(1010.0));
        assert_eq!(grid.get(3, 2), Some(1110.0));
    }

    #[test]
    fn eight_bit_png_is_refused() {
        let buffer: ImageBuffer<Luma<u8>, Vec<u8>> =
            ImageBuffer::from_raw(3, 3, vec![1; 9]).unwrap();
        let mut out = Cursor::new(Vec::new());
        buffer.write_to(&mut out, ImageFormat::Png).unwrap();
        let err = read_heightmap_png(&out.into_inner(), SIDECAR, "h.png").unwrap_err();
        assert!(matches!(err.problem, LoadProblem::PngNotGrey16(_)), "{err}");
        assert!(err.to_string().starts_with("h.png: "));
    }

    #[test]
    fn sidecar_with_unknown_field_is_refused() {
        let levels = vec![5u16; 9];
        let err = read_heightmap_png(
            &png(&levels, 3, 3),
            r#"{"west_m":0,"north_m":0,"cell_size_m":1,"vertical_scale_m":1,"colour":1}"#,
            "h.png",
        )
        .unwrap_err();
        assert!(err.to_string().contains("colour"), "{err}");
    }
}
