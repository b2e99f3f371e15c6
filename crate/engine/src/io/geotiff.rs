//! GeoTIFF reading and writing (OGC GeoTIFF 1.1 tags on TIFF 6.0), through the `tiff` crate.
//!
//! Reads single-band grids of u8/i8/u16/i16/u32/i32/f32/f64 samples, little or big endian,
//! stripped or tiled, uncompressed, LZW or Deflate, with horizontal or floating-point
//! predictors (all decoded by `tiff`). Georeference comes from ModelPixelScale (33550) with
//! ModelTiepoint (33922), or from ModelTransformation (34264) without rotation; the CRS from
//! the GeoKeyDirectory (34735); nodata from GDAL_NODATA (42113).
//!
//! A grid with more cells than the model can hold (a LiDAR DEM of 1-2 m over a park), or one
//! asked for at a coarser working cell size, is coarsened while it is read: strip by strip or
//! tile by tile into whole blocks of k x k cells (the area mean of the block's valid cells,
//! nodata where fewer than half are valid; or the block's central cell for class codes), so
//! the full-resolution grid is never held (common practice, no source).

use std::io::Cursor;

use tiff::decoder::{Decoder, DecodingResult, Limits};
use tiff::encoder::{colortype, Compression, DeflateLevel, TiffEncoder};
use tiff::tags::{Predictor, Tag};
use tiff::{ColorType, TiffError};

use crate::base::grid::{Grid, GridGeometry, MAX_CELLS};
use crate::base::load_error::{LoadError, LoadProblem};

const TAG_MODEL_PIXEL_SCALE: Tag = Tag::ModelPixelScaleTag;
const TAG_MODEL_TIEPOINT: Tag = Tag::ModelTiepointTag;
const TAG_MODEL_TRANSFORMATION: Tag = Tag::ModelTransformationTag;
const TAG_GEO_KEY_DIRECTORY: Tag = Tag::GeoKeyDirectoryTag;
const TAG_GDAL_NODATA: Tag = Tag::GdalNodata;

const KEY_MODEL_TYPE: u16 = 1024;
const KEY_RASTER_TYPE: u16 = 1025;
const KEY_GEOGRAPHIC_TYPE: u16 = 2048;
const KEY_PROJECTED_CS_TYPE: u16 = 3072;
const KEY_PROJ_LINEAR_UNITS: u16 = 3076;
const MODEL_TYPE_PROJECTED: u16 = 1;
const MODEL_TYPE_GEOGRAPHIC: u16 = 2;
const RASTER_PIXEL_IS_POINT: u16 = 2;
const UNIT_METRE: u16 = 9001;
const USER_DEFINED: u16 = 32767;

/// Most cells a source grid may claim, coarsened or not (20,000 x 20,000): a header beyond it
/// is refused before anything is decoded.
pub const MAX_SOURCE_CELLS: usize = 400_000_000;

/// How blocks of cells become one when a grid is coarsened on load.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Coarsening {
    /// Area mean of the block's valid cells (elevations, thickness).
    Mean,
    /// The block's central cell (class codes).
    Central,
}

/// How to read a grid: the most cells to keep and an optional working cell size.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ReadOptions {
    /// Coarsen by the smallest whole factor that brings the grid within this many cells.
    pub max_cells: usize,
    /// Coarsen to the whole multiple of the source cell nearest this size, m.
    pub cell_size_m: Option<f64>,
    pub coarsening: Coarsening,
}

impl Default for ReadOptions {
    fn default() -> Self {
        ReadOptions {
            max_cells: MAX_CELLS,
            cell_size_m: None,
            coarsening: Coarsening::Mean,
        }
    }
}

/// A grid read, with a note when it was coarsened on load.
#[derive(Clone, Debug, PartialEq)]
pub struct ReadGrid {
    pub grid: Grid,
    pub note: Option<String>,
}

/// Reads a single-band GeoTIFF into a grid, coarsened by area mean if it holds more than
/// [`MAX_CELLS`] cells. `source_name` is used in error messages.
pub fn read_geotiff(bytes: &[u8], source_name: &str) -> Result<Grid, LoadError> {
    read_geotiff_with(bytes, source_name, ReadOptions::default()).map(|r| r.grid)
}

/// Reads a single-band GeoTIFF as `options` ask, saying in the note how it was coarsened.
pub fn read_geotiff_with(
    bytes: &[u8],
    source_name: &str,
    options: ReadOptions,
) -> Result<ReadGrid, LoadError> {
    read(bytes, options).map_err(|problem| LoadError::new(source_name, problem))
}

/// The coarsening factor for a source grid: 1, or the whole factor that gives the working
/// cell size asked, raised until the grid fits.
fn coarsening_factor(n_cols: usize, n_rows: usize, cell_m: f64, options: &ReadOptions) -> usize {
    let mut k = options
        .cell_size_m
        .map_or(1, |c| (c / cell_m).round().max(1.0) as usize);
    while n_cols.div_ceil(k) * n_rows.div_ceil(k) > options.max_cells {
        k += 1;
    }
    k
}

fn read(bytes: &[u8], options: ReadOptions) -> Result<ReadGrid, LoadProblem> {
    if bytes.len() < 8 || !(bytes.starts_with(b"II") || bytes.starts_with(b"MM")) {
        return Err(LoadProblem::NotTiff);
    }
    let mut limits = Limits::default();
    limits.decoding_buffer_size = MAX_CELLS * 8 + 1024;
    limits.ifd_value_size = 4 * 1024 * 1024;
    let mut decoder = Decoder::new(Cursor::new(bytes))
        .map_err(tiff_problem)?
        .with_limits(limits);

    let samples_per_pixel: u16 = decoder
        .find_tag_unsigned(Tag::SamplesPerPixel)
        .map_err(tiff_problem)?
        .unwrap_or(1);
    if samples_per_pixel != 1 {
        return Err(LoadProblem::SeveralBands(samples_per_pixel));
    }
    let (width, height) = decoder.dimensions().map_err(tiff_problem)?;
    let (n_cols, n_rows) = (width as usize, height as usize);
    if n_cols < 3 || n_rows < 3 {
        return Err(LoadProblem::TooSmall { n_cols, n_rows });
    }
    let cells = n_cols * n_rows;
    if cells > MAX_SOURCE_CELLS {
        return Err(LoadProblem::TooLarge {
            n_cols,
            n_rows,
            cells,
            limit: MAX_SOURCE_CELLS,
        });
    }
    match decoder.colortype().map_err(tiff_problem)? {
        ColorType::Gray(_) => {}
        other => {
            return Err(LoadProblem::UnsupportedEncoding(format!(
                "colour type {other:?}"
            )))
        }
    }

    let geometry = read_geometry(&mut decoder, n_cols, n_rows)?;
    let nodata_value = match decoder.find_tag(TAG_GDAL_NODATA).map_err(tiff_problem)? {
        Some(value) => {
            let text = value.into_string().map_err(tiff_problem)?;
            let trimmed = text.trim_matches(char::from(0)).trim();
            let parsed = match trimmed.to_ascii_lowercase().as_str() {
                "nan" | "-nan" => f64::NAN,
                other => other
                    .parse::<f64>()
                    .map_err(|_| LoadProblem::BadNodata(trimmed.to_string()))?,
            };
            Some(parsed)
        }
        None => None,
    };

    let k = coarsening_factor(n_cols, n_rows, geometry.cell_size_m, &options);
    if k > 1 {
        return read_coarsened(&mut decoder, geometry, nodata_value, k, options);
    }
    let image = decoder.read_image().map_err(tiff_problem)?;
    let (values, nodata) = to_f32(image, nodata_value)?;
    if values.len() != cells {
        return Err(LoadProblem::CorruptTiff(format!(
            "{} samples decoded for {} cells",
            values.len(),
            cells
        )));
    }
    if nodata.iter().all(|&m| m) {
        return Err(LoadProblem::AllNodata);
    }
    Ok(ReadGrid {
        grid: Grid {
            geometry,
            values,
            nodata,
            nodata_value,
        },
        note: None,
    })
}

/// Reads the image chunk by chunk into blocks of `k x k` source cells.
fn read_coarsened<R: std::io::Read + std::io::Seek>(
    decoder: &mut Decoder<R>,
    source: GridGeometry,
    nodata_value: Option<f64>,
    k: usize,
    options: ReadOptions,
) -> Result<ReadGrid, LoadProblem> {
    let (n_cols, n_rows) = (source.n_cols, source.n_rows);
    let (out_cols, out_rows) = (n_cols.div_ceil(k), n_rows.div_ceil(k));
    let n_out = out_cols * out_rows;
    let mut sums = vec![0.0_f64; n_out];
    let mut counts = vec![0u32; n_out];
    let (chunk_w, chunk_h) = decoder.chunk_dimensions();
    let (chunk_w, chunk_h) = (chunk_w as usize, chunk_h as usize);
    if chunk_w == 0 || chunk_h == 0 {
        return Err(LoadProblem::CorruptTiff("chunk of zero size".into()));
    }
    let across = n_cols.div_ceil(chunk_w);
    let n_chunks = across * n_rows.div_ceil(chunk_h);
    // The central source cell of a block, for class codes.
    let centre = |i: usize, n: usize| (i * k + k / 2).min(n - 1);
    for chunk in 0..n_chunks {
        let (col0, row0) = ((chunk % across) * chunk_w, (chunk / across) * chunk_h);
        let image = decoder.read_chunk(chunk as u32).map_err(tiff_problem)?;
        let (values, missing) = to_f32(image, nodata_value)?;
        let width = chunk_w.min(n_cols - col0);
        let height = values.len() / width.max(1);
        for r in 0..height.min(n_rows - row0) {
            let row = row0 + r;
            let out_row = row / k;
            for c in 0..width {
                let i = r * width + c;
                if missing[i] {
                    continue;
                }
                let col = col0 + c;
                let out = out_row * out_cols + col / k;
                match options.coarsening {
                    Coarsening::Mean => {
                        sums[out] += f64::from(values[i]);
                        counts[out] += 1;
                    }
                    Coarsening::Central => {
                        if row == centre(out_row, n_rows) && col == centre(col / k, n_cols) {
                            sums[out] = f64::from(values[i]);
                            counts[out] = 1;
                        }
                    }
                }
            }
        }
    }
    let mut values = vec![f32::NAN; n_out];
    let mut nodata = vec![true; n_out];
    for out in 0..n_out {
        let (out_row, out_col) = (out / out_cols, out % out_cols);
        let block_cells = (k.min(n_rows - out_row * k) * k.min(n_cols - out_col * k)) as u32;
        let enough = match options.coarsening {
            Coarsening::Mean => 2 * counts[out] >= block_cells,
            Coarsening::Central => counts[out] == 1,
        };
        if enough && counts[out] > 0 {
            values[out] = (sums[out] / f64::from(counts[out])) as f32;
            nodata[out] = false;
        }
    }
    if nodata.iter().all(|&m| m) {
        return Err(LoadProblem::AllNodata);
    }
    let geometry = GridGeometry {
        n_cols: out_cols,
        n_rows: out_rows,
        cell_size_m: source.cell_size_m * k as f64,
        ..source
    };
    let why = if n_cols * n_rows > options.max_cells
        && options
            .cell_size_m
            .is_none_or(|c| (c / source.cell_size_m).round() < k as f64)
    {
        format!("to fit the {} cells the model holds", options.max_cells)
    } else {
        "as the working cell size asks".to_string()
    };
    let how = match options.coarsening {
        Coarsening::Mean => "area mean of each block's valid cells",
        Coarsening::Central => "each block's central cell",
    };
    let note = format!(
        "{} x {} cells of {} m coarsened on load to {out_cols} x {out_rows} cells of {} m \
         ({k} x {k} blocks, {how}) {why}",
        n_cols, n_rows, source.cell_size_m, geometry.cell_size_m
    );
    Ok(ReadGrid {
        grid: Grid {
            geometry,
            values,
            nodata,
            nodata_value,
        },
        note: Some(note),
    })
}

fn tiff_problem(error: TiffError) -> LoadProblem {
    match error {
        TiffError::FormatError(e) => LoadProblem::CorruptTiff(e.to_string()),
        TiffError::IoError(e) => LoadProblem::CorruptTiff(e.to_string()),
        TiffError::UnsupportedError(e) => LoadProblem::UnsupportedEncoding(e.to_string()),
        TiffError::LimitsExceeded => LoadProblem::CorruptTiff("a size limit was exceeded".into()),
        other => LoadProblem::CorruptTiff(other.to_string()),
    }
}

fn read_geometry<R: std::io::Read + std::io::Seek>(
    decoder: &mut Decoder<R>,
    n_cols: usize,
    n_rows: usize,
) -> Result<GridGeometry, LoadProblem> {
    let keys = match decoder
        .find_tag(TAG_GEO_KEY_DIRECTORY)
        .map_err(tiff_problem)?
    {
        Some(v) => parse_geo_keys(&v.into_u16_vec().map_err(tiff_problem)?),
        None => Vec::new(),
    };
    let key = |id: u16| keys.iter().find(|(k, _)| *k == id).map(|(_, v)| *v);

    let epsg = match key(KEY_MODEL_TYPE) {
        Some(MODEL_TYPE_GEOGRAPHIC) => {
            let code =
                key(KEY_GEOGRAPHIC_TYPE).map_or("no code".to_string(), |c| format!("EPSG:{c}"));
            return Err(LoadProblem::GeographicCrs(code));
        }
        _ => match key(KEY_PROJECTED_CS_TYPE) {
            Some(USER_DEFINED) | None => None,
            Some(code) => Some(u32::from(code)),
        },
    };
    if let Some(unit) = key(KEY_PROJ_LINEAR_UNITS) {
        if unit != UNIT_METRE && unit != USER_DEFINED {
            return Err(LoadProblem::NotMetres(unit));
        }
    }
    let pixel_is_point = key(KEY_RASTER_TYPE) == Some(RASTER_PIXEL_IS_POINT);

    let scale = decoder
        .find_tag(TAG_MODEL_PIXEL_SCALE)
        .map_err(tiff_problem)?;
    let tiepoint = decoder.find_tag(TAG_MODEL_TIEPOINT).map_err(tiff_problem)?;
    let transformation = decoder
        .find_tag(TAG_MODEL_TRANSFORMATION)
        .map_err(tiff_problem)?;

    // (x of column 0's west edge, y of row 0's north edge, cell width, cell height)
    let (mut west, mut north, dx, dy) = match (scale, tiepoint, transformation) {
        (Some(scale), Some(tiepoint), _) => {
            let scale = scale.into_f64_vec().map_err(tiff_problem)?;
            let tie = tiepoint.into_f64_vec().map_err(tiff_problem)?;
            if scale.len() < 2 || tie.len() < 6 {
                return Err(LoadProblem::CorruptTiff(
                    "short ModelPixelScale or ModelTiepoint".into(),
                ));
            }
            let (dx, dy) = (scale[0], scale[1]);
            (tie[3] - tie[0] * dx, tie[4] + tie[1] * dy, dx, dy)
        }
        (_, _, Some(matrix)) => {
            let m = matrix.into_f64_vec().map_err(tiff_problem)?;
            if m.len() < 16 {
                return Err(LoadProblem::CorruptTiff("short ModelTransformation".into()));
            }
            if m[1] != 0.0 || m[4] != 0.0 {
                return Err(LoadProblem::RotatedTransform(m[1], m[4]));
            }
            if m[5] > 0.0 {
                return Err(LoadProblem::NotNorthUp);
            }
            (m[3], m[7], m[0], -m[5])
        }
        _ => return Err(LoadProblem::NoGeoreference),
    };
    if !(dx.is_finite() && dx > 0.0) {
        return Err(LoadProblem::BadCellSize(dx));
    }
    if !(dy.is_finite() && dy > 0.0) {
        return Err(if dy < 0.0 {
            LoadProblem::NotNorthUp
        } else {
            LoadProblem::BadCellSize(dy)
        });
    }
    if (dx - dy).abs() > 1e-6 * dx {
        return Err(LoadProblem::NonSquareCells { x_m: dx, y_m: dy });
    }
    // Without GeoKeys, tiny cells at plausible lon/lat are degrees in all but name.
    if keys.is_empty() && dx < 0.01 && west.abs() <= 180.0 && north.abs() <= 90.0 {
        return Err(LoadProblem::GeographicCrs(
            "cell size below 0.01 at longitude/latitude-like coordinates, no GeoKeys".into(),
        ));
    }
    if pixel_is_point {
        // The tiepoint names the centre of the corner cell, not its outer corner.
        west -= 0.5 * dx;
        north += 0.5 * dy;
    }
    Ok(GridGeometry {
        n_cols,
        n_rows,
        cell_size_m: dx,
        west_m: west,
        north_m: north,
        epsg,
    })
}

/// GeoKey directory entries carried inline (TIFFTagLocation 0) as (key, value).
fn parse_geo_keys(directory: &[u16]) -> Vec<(u16, u16)> {
    if directory.len() < 4 {
        return Vec::new();
    }
    let n_keys = directory[3] as usize;
    directory[4..]
        .chunks_exact(4)
        .take(n_keys)
        .filter(|entry| entry[1] == 0 && entry[2] == 1)
        .map(|entry| (entry[0], entry[3]))
        .collect()
}

fn to_f32(
    image: DecodingResult,
    nodata: Option<f64>,
) -> Result<(Vec<f32>, Vec<bool>), LoadProblem> {
    fn convert<T: Copy>(
        samples: Vec<T>,
        nodata: Option<f64>,
        as_f64: impl Fn(T) -> f64,
    ) -> (Vec<f32>, Vec<bool>) {
        let mut values = Vec::with_capacity(samples.len());
        let mut mask = Vec::with_capacity(samples.len());
        for sample in samples {
            let v = as_f64(sample);
            let missing =
                !v.is_finite() || nodata.is_some_and(|nd| v == nd || (v as f32) == (nd as f32));
            mask.push(missing);
            values.push(if missing { f32::NAN } else { v as f32 });
        }
        (values, mask)
    }
    Ok(match image {
        DecodingResult::U8(s) => convert(s, nodata, f64::from),
        DecodingResult::I8(s) => convert(s, nodata, f64::from),
        DecodingResult::U16(s) => convert(s, nodata, f64::from),
        DecodingResult::I16(s) => convert(s, nodata, f64::from),
        DecodingResult::U32(s) => convert(s, nodata, f64::from),
        DecodingResult::I32(s) => convert(s, nodata, f64::from),
        DecodingResult::F32(s) => convert(s, nodata, f64::from),
        DecodingResult::F64(s) => convert(s, nodata, |v| v),
        other => {
            return Err(LoadProblem::UnsupportedEncoding(format!(
                "sample type {}",
                match other {
                    DecodingResult::U64(_) => "u64",
                    DecodingResult::I64(_) => "i64",
                    DecodingResult::F16(_) => "f16",
                    _ => "unknown",
                }
            )))
        }
    })
}

/// Sample type of a written GeoTIFF.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SampleType {
    U8,
    U16,
    I16,
    I32,
    F32,
    F64,
}

/// Compression of a written GeoTIFF.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum TiffCompression {
    None,
    Lzw,
    Deflate,
}

/// How to write a GeoTIFF. The default (f32, Deflate) keeps every value exactly.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct WriteOptions {
    pub sample_type: SampleType,
    pub compression: TiffCompression,
    /// Horizontal differencing (TIFF predictor 2); integer samples only.
    pub horizontal_predictor: bool,
}

impl Default for WriteOptions {
    fn default() -> Self {
        WriteOptions {
            sample_type: SampleType::F32,
            compression: TiffCompression::Deflate,
            horizontal_predictor: false,
        }
    }
}

/// Writes a grid as a single-band, north-up GeoTIFF with the default options.
pub fn write_geotiff(grid: &Grid) -> Vec<u8> {
    write_geotiff_with(grid, WriteOptions::default())
        .expect("f32 Deflate without predictor is always encodable")
}

/// Error from writing a GeoTIFF with options the encoder cannot honour.
#[derive(Debug, thiserror::Error)]
#[error("cannot write GeoTIFF: {0}")]
pub struct WriteError(String);

/// Writes a grid as a single-band GeoTIFF. Integer types round values and store nodata as
/// the grid's nodata value (or the type's minimum when it has none).
pub fn write_geotiff_with(grid: &Grid, options: WriteOptions) -> Result<Vec<u8>, WriteError> {
    write_geotiff_described(grid, options, None)
}

/// As [`write_geotiff_with`], with `description` in the TIFF ImageDescription tag (270;
/// TIFF 6.0), which GIS tools show with the file's metadata.
pub fn write_geotiff_described(
    grid: &Grid,
    options: WriteOptions,
    description: Option<&str>,
) -> Result<Vec<u8>, WriteError> {
    let g = &grid.geometry;
    let mut buffer = Cursor::new(Vec::new());
    let compression = match options.compression {
        TiffCompression::None => Compression::Uncompressed,
        TiffCompression::Lzw => Compression::Lzw,
        TiffCompression::Deflate => Compression::Deflate(DeflateLevel::Balanced),
    };
    let predictor = if options.horizontal_predictor {
        Predictor::Horizontal
    } else {
        Predictor::None
    };
    let mut encoder = TiffEncoder::new(&mut buffer)
        .map_err(|e| WriteError(e.to_string()))?
        .with_compression(compression)
        .with_predictor(predictor);

    let float_type = matches!(options.sample_type, SampleType::F32 | SampleType::F64);
    let nodata_value = match (grid.nodata_value, float_type) {
        (Some(v), _) => v,
        (None, true) => f64::NAN,
        (None, false) => match options.sample_type {
            SampleType::U8 | SampleType::U16 => 0.0,
            SampleType::I16 => f64::from(i16::MIN),
            _ => f64::from(i32::MIN),
        },
    };
    let any_nodata = grid.nodata.iter().any(|&m| m);
    let cell_value = |idx: usize| -> f64 {
        if grid.nodata[idx] {
            nodata_value
        } else {
            f64::from(grid.values[idx])
        }
    };
    let n = g.n_cells();
    let (w, h) = (g.n_cols as u32, g.n_rows as u32);

    macro_rules! write_as {
        ($color:ty, $t:ty) => {{
            let data: Vec<$t> = (0..n).map(|i| cell_value(i).round() as $t).collect();
            let mut image = encoder
                .new_image::<$color>(w, h)
                .map_err(|e| WriteError(e.to_string()))?;
            write_geo_tags(image.encoder(), g, any_nodata.then_some(nodata_value))?;
            write_description(image.encoder(), description)?;
            image
                .write_data(&data)
                .map_err(|e| WriteError(e.to_string()))?;
        }};
    }
    match options.sample_type {
        SampleType::U8 => write_as!(colortype::Gray8, u8),
        SampleType::U16 => write_as!(colortype::Gray16, u16),
        SampleType::I16 => write_as!(colortype::GrayI16, i16),
        SampleType::I32 => write_as!(colortype::GrayI32, i32),
        SampleType::F32 => {
            let data: Vec<f32> = (0..n).map(|i| cell_value(i) as f32).collect();
            let mut image = encoder
                .new_image::<colortype::Gray32Float>(w, h)
                .map_err(|e| WriteError(e.to_string()))?;
            write_geo_tags(image.encoder(), g, any_nodata.then_some(nodata_value))?;
            write_description(image.encoder(), description)?;
            image
                .write_data(&data)
                .map_err(|e| WriteError(e.to_string()))?;
        }
        SampleType::F64 => {
            let data: Vec<f64> = (0..n).map(cell_value).collect();
            let mut image = encoder
                .new_image::<colortype::Gray64Float>(w, h)
                .map_err(|e| WriteError(e.to_string()))?;
            write_geo_tags(image.encoder(), g, any_nodata.then_some(nodata_value))?;
            write_description(image.encoder(), description)?;
            image
                .write_data(&data)
                .map_err(|e| WriteError(e.to_string()))?;
        }
    }
    Ok(buffer.into_inner())
}

/// A Float32 GeoTIFF (uncompressed strips of `rows_per_strip` rows; the `tiff` encoder
/// compresses only whole images) written strip by strip from `fill_row(row, values)`, so the
/// grid is never held whole (the benchmark's LiDAR-sized DEM; NaN is nodata).
pub fn write_geotiff_rows(
    geometry: &GridGeometry,
    rows_per_strip: usize,
    mut fill_row: impl FnMut(usize, &mut [f32]),
) -> Result<Vec<u8>, WriteError> {
    let err = |e: TiffError| WriteError(e.to_string());
    let mut buffer = Cursor::new(Vec::new());
    let mut encoder = TiffEncoder::new(&mut buffer).map_err(err)?;
    let (w, h) = (geometry.n_cols, geometry.n_rows);
    let mut image = encoder
        .new_image::<colortype::Gray32Float>(w as u32, h as u32)
        .map_err(err)?;
    write_geo_tags(image.encoder(), geometry, Some(f64::NAN))?;
    let rows_per_strip = rows_per_strip.clamp(1, h);
    image.rows_per_strip(rows_per_strip as u32).map_err(err)?;
    let mut strip = vec![0.0_f32; w * rows_per_strip];
    for first in (0..h).step_by(rows_per_strip) {
        let n = rows_per_strip.min(h - first);
        for (r, row) in strip[..n * w].chunks_exact_mut(w).enumerate() {
            fill_row(first + r, row);
        }
        image.write_strip(&strip[..n * w]).map_err(err)?;
    }
    image.finish().map_err(err)?;
    Ok(buffer.into_inner())
}

fn write_description<W: std::io::Write + std::io::Seek, K: tiff::encoder::TiffKind>(
    dir: &mut tiff::encoder::DirectoryEncoder<'_, W, K>,
    description: Option<&str>,
) -> Result<(), WriteError> {
    match description {
        // TIFF ASCII is 7-bit; anything else would make strict readers refuse the tag.
        Some(text) => dir
            .write_tag(
                tiff::tags::Tag::ImageDescription,
                text.replace(|c: char| !c.is_ascii() || c.is_ascii_control(), " ")
                    .as_str(),
            )
            .map_err(|e| WriteError(e.to_string())),
        None => Ok(()),
    }
}

fn write_geo_tags<W: std::io::Write + std::io::Seek, K: tiff::encoder::TiffKind>(
    dir: &mut tiff::encoder::DirectoryEncoder<'_, W, K>,
    g: &GridGeometry,
    nodata: Option<f64>,
) -> Result<(), WriteError> {
    let err = |e: TiffError| WriteError(e.to_string());
    dir.write_tag(
        TAG_MODEL_PIXEL_SCALE,
        &[g.cell_size_m, g.cell_size_m, 0.0][..],
    )
    .map_err(err)?;
    dir.write_tag(
        TAG_MODEL_TIEPOINT,
        &[0.0, 0.0, 0.0, g.west_m, g.north_m, 0.0][..],
    )
    .map_err(err)?;
    let projected = g
        .epsg
        .map_or(USER_DEFINED, |c| u16::try_from(c).unwrap_or(USER_DEFINED));
    let keys: [u16; 20] = [
        1,
        1,
        0,
        4, // directory version, revision, minor revision, key count
        KEY_MODEL_TYPE,
        0,
        1,
        MODEL_TYPE_PROJECTED,
        KEY_RASTER_TYPE,
        0,
        1,
        1, // PixelIsArea
        KEY_PROJECTED_CS_TYPE,
        0,
        1,
        projected,
        KEY_PROJ_LINEAR_UNITS,
        0,
        1,
        UNIT_METRE,
    ];
    dir.write_tag(TAG_GEO_KEY_DIRECTORY, &keys[..])
        .map_err(err)?;
    if let Some(value) = nodata {
        let text = if value.is_nan() {
            "nan".to_string()
        } else {
            format!("{value}")
        };
        dir.write_tag(TAG_GDAL_NODATA, text.as_str()).map_err(err)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample_grid() -> Grid {
        let geometry = GridGeometry {
            n_cols: 5,
            n_rows: 4,
            cell_size_m: 30.0,
            west_m: 600_000.0,
            north_m: 5_100_000.0,
            epsg: Some(32632),
        };
        let mut values: Vec<f32> = (0..20).map(|i| 1500.0 + 7.0 * i as f32).collect();
        values[7] = f32::NAN;
        Grid::from_values(geometry, values)
    }

    #[test]
    fn round_trip_in_every_written_encoding() {
        let grid = sample_grid();
        for sample_type in [
            SampleType::U16,
            SampleType::I16,
            SampleType::I32,
            SampleType::F32,
            SampleType::F64,
        ] {
            for compression in [
                TiffCompression::None,
                TiffCompression::Lzw,
                TiffCompression::Deflate,
            ] {
                let float = matches!(sample_type, SampleType::F32 | SampleType::F64);
                for predictor in [false, true] {
                    if predictor && float {
                        continue;
                    }
                    let options = WriteOptions {
                        sample_type,
                        compression,
                        horizontal_predictor: predictor,
                    };
                    let bytes = write_geotiff_with(&grid, options).unwrap();
                    let back = read_geotiff(&bytes, "t.tif").unwrap();
                    assert_eq!(back.geometry, grid.geometry, "{options:?}");
                    assert_eq!(back.nodata, grid.nodata, "{options:?}");
                    for (a, b) in back.values.iter().zip(&grid.values) {
                        assert!(
                            a == b || (a.is_nan() && b.is_nan()),
                            "{options:?}: {a} vs {b}"
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn geo_key_parsing_skips_tag_located_values() {
        let dir = [
            1, 1, 0, 3, 1024, 0, 1, 1, 2049, 34737, 7, 0, 3072, 0, 1, 32633,
        ];
        assert_eq!(parse_geo_keys(&dir), vec![(1024, 1), (3072, 32633)]);
    }
}

#[cfg(test)]
mod row_writer_tests {
    use super::*;

    #[test]
    fn rows_written_strip_by_strip_read_back_whole_and_coarsened() {
        let g = GridGeometry {
            n_cols: 37,
            n_rows: 41,
            cell_size_m: 2.0,
            west_m: 400_000.0,
            north_m: 5_000_000.0,
            epsg: Some(32632),
        };
        let value = |r: usize, c: usize| (r * 100 + c) as f32;
        let bytes = write_geotiff_rows(&g, 16, |r, row| {
            for (c, v) in row.iter_mut().enumerate() {
                *v = value(r, c);
            }
        })
        .unwrap();
        let whole = read_geotiff(&bytes, "rows.tif").unwrap();
        assert_eq!(whole.geometry, g);
        assert_eq!(whole.get(36, 40), Some(value(40, 36)));
        let options = ReadOptions {
            cell_size_m: Some(4.0),
            ..ReadOptions::default()
        };
        let read = read_geotiff_with(&bytes, "rows.tif", options).unwrap();
        // Block (0, 0) holds rows 0-1, columns 0-1: mean 50.5.
        assert_eq!(read.grid.get(0, 0), Some(50.5));
        assert!(read.note.unwrap().contains("working cell size"));
    }
}
