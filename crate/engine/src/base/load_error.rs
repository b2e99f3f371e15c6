//! Errors for grids read from bytes: each names the file and the problem found in it.

use thiserror::Error;

/// A grid file that could not be used, with the file's name.
#[derive(Debug, Error, Clone, PartialEq)]
#[error("{file}: {problem}")]
pub struct LoadError {
    pub file: String,
    pub problem: LoadProblem,
}

impl LoadError {
    pub fn new(file: &str, problem: LoadProblem) -> LoadError {
        LoadError {
            file: file.to_string(),
            problem,
        }
    }
}

/// What was wrong with a grid file.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum LoadProblem {
    #[error("not a TIFF file (the first bytes are not a TIFF header)")]
    NotTiff,
    #[error("the TIFF data is corrupt or truncated ({0})")]
    CorruptTiff(String),
    #[error("unsupported TIFF encoding ({0})")]
    UnsupportedEncoding(String),
    #[error("the image has {0} bands; a terrain or ice grid must have exactly one band")]
    SeveralBands(u16),
    #[error("no georeference: the file has neither ModelPixelScale + ModelTiepoint nor ModelTransformation tags")]
    NoGeoreference,
    #[error("the georeference is rotated or sheared (ModelTransformation terms {0} and {1}); only north-up grids are supported, reproject it first")]
    RotatedTransform(f64, f64),
    #[error("the grid is not north-up (the row direction points south to north); flip it first")]
    NotNorthUp,
    #[error("the CRS is geographic ({0}); the model needs a projected CRS in metres, reproject it first (e.g. to the local UTM zone)")]
    GeographicCrs(String),
    #[error(
        "the CRS uses linear unit code {0}, not metres (9001); reproject to a metric CRS first"
    )]
    NotMetres(u16),
    #[error("cells are not square ({x_m} m by {y_m} m); resample to square cells first")]
    NonSquareCells { x_m: f64, y_m: f64 },
    #[error("cell size {0} m is not a positive finite number")]
    BadCellSize(f64),
    #[error("the grid has {cells} cells ({n_cols} x {n_rows}), more than the {limit} cells a browser tab can hold with the model's layers; crop or coarsen it")]
    TooLarge {
        n_cols: usize,
        n_rows: usize,
        cells: usize,
        limit: usize,
    },
    #[error("the grid is too small ({n_cols} x {n_rows}); at least 3 x 3 cells are needed")]
    TooSmall { n_cols: usize, n_rows: usize },
    #[error("every cell is nodata")]
    AllNodata,
    #[error("the GDAL_NODATA tag {0:?} is not a number")]
    BadNodata(String),
    #[error("not a PNG file or a corrupt one ({0})")]
    BadPng(String),
    #[error("the PNG height map must be 16-bit greyscale, found {0}")]
    PngNotGrey16(String),
    #[error("the height map's sidecar JSON is invalid: {0}")]
    BadSidecar(String),
    #[error("a cell holds {value}, which is not a {what} (whole numbers 0 to {max})")]
    BadClassCode {
        what: &'static str,
        value: f64,
        max: u8,
    },
    #[error("the grid is in EPSG:{found} but the terrain is in EPSG:{expected}; reproject it to the terrain's CRS first")]
    CrsMismatch { found: u32, expected: u32 },
    #[error("the grid (west {west_m} m, south {south_m} m, east {east_m} m, north {north_m} m) does not overlap the terrain")]
    NoOverlap {
        west_m: f64,
        south_m: f64,
        east_m: f64,
        north_m: f64,
    },
    #[error(
        "a cell holds {value} {unit}, outside the {min} to {max} {unit} the model takes for {what}"
    )]
    ValueOutOfRange {
        what: &'static str,
        value: f64,
        unit: &'static str,
        min: f64,
        max: f64,
    },
}
