//! GeoTIFF reading checked against files written by an independent writer (GDAL 3.6.2's
//! gdal_translate, see `tests/fixtures/make_gdal_fixtures.sh`) and the refusals of issue 2.

use forefield_engine::io::geotiff::{
    read_geotiff, read_geotiff_with, write_geotiff, write_geotiff_with, ReadOptions, SampleType,
    TiffCompression, WriteOptions,
};
use forefield_engine::{Grid, GridGeometry, LoadProblem, MAX_CELLS};
use forefield_reference_tests::fixture;

/// The value `codes.asc` holds at a cell (see the fixture script).
fn code_value(col: usize, row: usize) -> Option<f32> {
    if (col, row) == (7, 3) {
        None
    } else {
        Some((10 + col + 2 * row + (col * row) % 7) as f32)
    }
}

fn check_codes_grid(name: &str) {
    let grid = read_geotiff(&fixture(name), name).unwrap_or_else(|e| panic!("{e}"));
    let g = grid.geometry;
    assert_eq!((g.n_cols, g.n_rows), (40, 30), "{name}");
    assert_eq!(g.cell_size_m, 30.0, "{name}");
    // The ASCII grid's lower-left corner is (600000, 5100000): north edge 30 rows of 30 m up.
    assert_eq!((g.west_m, g.north_m), (600_000.0, 5_100_900.0), "{name}");
    assert_eq!(g.epsg, Some(32632), "{name}");
    for row in 0..30 {
        for col in 0..40 {
            assert_eq!(
                grid.get(col, row),
                code_value(col, row),
                "{name} at ({col}, {row})"
            );
        }
    }
}

#[test]
fn reads_every_gdal_encoding() {
    for name in [
        "gdal_u8_none.tif",
        "gdal_i16_lzw_pred2.tif",
        "gdal_u16_deflate.tif",
        "gdal_i32_lzw.tif",
        "gdal_f32_deflate_pred3.tif",
        "gdal_f64_none_bigendian.tif",
        "gdal_f32_tiled_lzw_bigendian.tif",
        "gdal_i16_tiled_deflate_pred2.tif",
        "gdal_u16_tiled_deflate_pred2_bigendian.tif",
    ] {
        check_codes_grid(name);
    }
}

#[test]
fn own_writer_round_trips_gdal_data_in_each_encoding() {
    let source = read_geotiff(&fixture("gdal_i32_lzw.tif"), "gdal_i32_lzw.tif").unwrap();
    for sample_type in [
        SampleType::U8,
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
            let options = WriteOptions {
                sample_type,
                compression,
                horizontal_predictor: false,
            };
            let bytes = write_geotiff_with(&source, options).unwrap();
            let back = read_geotiff(&bytes, "round trip").unwrap();
            assert_eq!(back.geometry, source.geometry, "{options:?}");
            assert_eq!(back.nodata, source.nodata, "{options:?}");
            for (a, b) in back.values.iter().zip(&source.values) {
                assert!(a == b || (a.is_nan() && b.is_nan()), "{options:?}");
            }
        }
    }
}

fn problem_of(name: &str) -> LoadProblem {
    let err = read_geotiff(&fixture(name), name).expect_err(name);
    assert!(
        err.to_string().starts_with(&format!("{name}: ")),
        "message names the file: {err}"
    );
    err.problem
}

#[test]
fn refuses_geographic_crs() {
    assert!(
        matches!(problem_of("gdal_geographic.tif"), LoadProblem::GeographicCrs(code) if code == "EPSG:4326")
    );
}

#[test]
fn refuses_rotated_transform() {
    assert!(matches!(
        problem_of("gdal_rotated.tif"),
        LoadProblem::RotatedTransform(..)
    ));
}

#[test]
fn refuses_non_square_cells() {
    match problem_of("gdal_nonsquare.tif") {
        LoadProblem::NonSquareCells { x_m, y_m } => assert_eq!((x_m, y_m), (40.0, 30.0)),
        other => panic!("{other:?}"),
    }
}

#[test]
fn refuses_several_bands() {
    assert_eq!(
        problem_of("gdal_two_bands.tif"),
        LoadProblem::SeveralBands(2)
    );
}

#[test]
fn refuses_truncated_and_non_tiff_bytes() {
    assert!(matches!(
        problem_of("gdal_truncated.tif"),
        LoadProblem::CorruptTiff(_)
    ));
    assert_eq!(problem_of("codes.asc"), LoadProblem::NotTiff);
    let err = read_geotiff(b"", "empty.tif").unwrap_err();
    assert_eq!(err.problem, LoadProblem::NotTiff);
}

fn geometry(n_cols: usize, n_rows: usize) -> GridGeometry {
    GridGeometry {
        n_cols,
        n_rows,
        cell_size_m: 10.0,
        west_m: 0.0,
        north_m: 1000.0,
        epsg: Some(32633),
    }
}

#[test]
fn refuses_all_nodata() {
    let grid = Grid::from_values(geometry(4, 4), vec![f32::NAN; 16]);
    let err = read_geotiff(&write_geotiff(&grid), "holes.tif").unwrap_err();
    assert_eq!(err.problem, LoadProblem::AllNodata);
    assert_eq!(err.to_string(), "holes.tif: every cell is nodata");
}

/// A grid over the cell limit (a LiDAR-sized DEM) is no longer refused: it is coarsened on
/// load by the smallest whole factor that fits, here 2, with a note.
#[test]
fn grids_over_the_cell_limit_are_coarsened_on_load() {
    let side = (MAX_CELLS as f64).sqrt() as usize + 1;
    let grid = Grid::filled(geometry(side, side), 1.0);
    let options = WriteOptions {
        sample_type: SampleType::U8,
        compression: TiffCompression::Deflate,
        horizontal_predictor: false,
    };
    let bytes = write_geotiff_with(&grid, options).unwrap();
    let read = read_geotiff_with(&bytes, "big.tif", ReadOptions::default()).unwrap();
    let g = read.grid.geometry;
    assert_eq!((g.n_cols, g.n_rows), (side.div_ceil(2), side.div_ceil(2)));
    assert_eq!(g.cell_size_m, 2.0 * grid.geometry.cell_size_m);
    assert!(read.grid.values.iter().all(|&v| v == 1.0));
    let note = read.note.expect("a note");
    assert!(note.contains("coarsened on load"), "{note}");
}

/// Coarsening while reading, chunk by chunk, against block means of the grid read whole:
/// GDAL-written tiles (big- and little-endian, LZW and Deflate with predictors) and strips
/// with nodata wedges. Each block is the mean of its valid cells, nodata when fewer than half
/// are valid (sums of a few f32 values are exact in f64, so the results agree exactly).
#[test]
fn coarsening_on_load_is_the_block_mean_of_the_whole_grid() {
    for name in [
        "gdal_f32_tiled_lzw_bigendian.tif",
        "gdal_i16_tiled_deflate_pred2.tif",
        "gdal_u16_tiled_deflate_pred2_bigendian.tif",
        "ridge_valley_dem.tif",
    ] {
        let whole = read_geotiff(&fixture(name), name).unwrap();
        let g = whole.geometry;
        for k in [2usize, 3] {
            let options = ReadOptions {
                cell_size_m: Some(k as f64 * g.cell_size_m),
                ..ReadOptions::default()
            };
            let read = read_geotiff_with(&fixture(name), name, options).unwrap();
            let c = read.grid.geometry;
            assert_eq!(
                (c.n_cols, c.n_rows),
                (g.n_cols.div_ceil(k), g.n_rows.div_ceil(k))
            );
            assert_eq!((c.west_m, c.north_m), (g.west_m, g.north_m));
            for row in 0..c.n_rows {
                for col in 0..c.n_cols {
                    let (mut sum, mut n, mut total) = (0.0_f64, 0u32, 0u32);
                    for r in row * k..((row + 1) * k).min(g.n_rows) {
                        for q in col * k..((col + 1) * k).min(g.n_cols) {
                            total += 1;
                            if let Some(v) = whole.get(q, r) {
                                sum += f64::from(v);
                                n += 1;
                            }
                        }
                    }
                    let expected = (2 * n >= total && n > 0).then(|| (sum / f64::from(n)) as f32);
                    assert_eq!(
                        read.grid.get(col, row),
                        expected,
                        "{name} k {k} ({col}, {row})"
                    );
                }
            }
        }
    }
}

#[test]
fn refuses_plain_tiff_without_georeference() {
    let mut bytes = std::io::Cursor::new(Vec::new());
    tiff::encoder::TiffEncoder::new(&mut bytes)
        .unwrap()
        .write_image::<tiff::encoder::colortype::Gray32Float>(3, 3, &[1.0; 9])
        .unwrap();
    let err = read_geotiff(bytes.get_ref(), "photo.tif").unwrap_err();
    assert_eq!(err.problem, LoadProblem::NoGeoreference);
}
