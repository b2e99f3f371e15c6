//! Slope, aspect and hillshade by Horn (1981) checked against worked cells and against GDAL.
//!
//! Worked cells: the 3 x 3 examples of Esri's ArcGIS documentation pages "How Slope works",
//! "How Aspect works" and "How Hillshade works" (values from memory of those pages; each is
//! recomputed by hand in the comments). Independent reference: GDAL 3.6.2 `gdaldem`
//! (Horn's method is its default) on `tests/fixtures/slopes.asc`.

use forefield_engine::geotiff::read_geotiff;
use forefield_engine::terrain::{
    aspect_deg, derivatives, hillshade_value, horn_gradient, slope_deg, Sun,
};
use forefield_engine::{Grid, GridGeometry};
use forefield_reference_tests::fixture;

fn window(values: [f32; 9], cell_size_m: f64) -> Grid {
    let geometry = GridGeometry {
        n_cols: 3,
        n_rows: 3,
        cell_size_m,
        west_m: 0.0,
        north_m: 0.0,
        epsg: None,
    };
    Grid::from_values(geometry, values.to_vec())
}

#[test]
fn worked_slope_cell() {
    // dz/dx = (120 - 118) / 40 = 0.05, dz/dy = (38 - 190) / 40 = -3.8,
    // slope = atan(3.80033) = 75.258 degrees ("How Slope works": 75.25).
    let dem = window([50.0, 45.0, 50.0, 30.0, 30.0, 30.0, 8.0, 10.0, 10.0], 5.0);
    let g = horn_gradient(&dem, 1, 1).unwrap();
    assert!(
        (g.0 - 0.05).abs() < 1e-12 && (g.1 + 3.8).abs() < 1e-12,
        "{g:?}"
    );
    assert!((slope_deg(g) - 75.2576).abs() < 1e-3, "{}", slope_deg(g));
}

#[test]
fn worked_aspect_cell() {
    // dz/dx = -8.125, dz/dy = -0.375 per cell: faces 92.64 degrees ("How Aspect works").
    let dem = window(
        [101.0, 92.0, 85.0, 101.0, 92.0, 85.0, 101.0, 91.0, 84.0],
        1.0,
    );
    let aspect = aspect_deg(horn_gradient(&dem, 1, 1).unwrap()).unwrap();
    assert!((aspect - 92.6425).abs() < 1e-3, "{aspect}");
}

#[test]
fn worked_hillshade_cell() {
    // Sun at azimuth 315, altitude 45; slope 1.26511 rad, aspect 260.46 degrees:
    // 255 (cos 45 cos 72.49 + sin 45 sin 72.49 cos 54.54) = 154.1 ("How Hillshade works": 154).
    let dem = window(
        [
            2450.0, 2461.0, 2483.0, 2452.0, 2461.0, 2483.0, 2447.0, 2455.0, 2477.0,
        ],
        5.0,
    );
    let shade = hillshade_value(
        horn_gradient(&dem, 1, 1).unwrap(),
        Sun {
            azimuth_deg: 315.0,
            altitude_deg: 45.0,
        },
    );
    assert_eq!((255.0 * shade).round(), 154.0, "{}", 255.0 * shade);
}

fn gdal_layer(name: &str) -> Grid {
    read_geotiff(&fixture(name), name).unwrap_or_else(|e| panic!("{e}"))
}

/// Interior cells of the 48 x 40 fixture (GDAL's edge treatment differs from ours).
fn interior() -> impl Iterator<Item = (usize, usize)> {
    (1..39).flat_map(|row| (1..47).map(move |col| (col, row)))
}

#[test]
fn slope_and_aspect_match_gdaldem() {
    let dem = gdal_layer("gdal_slopes_dem.tif");
    let ours = derivatives(&dem, Sun::default());
    let slope = gdal_layer("gdal_slopes_slope_deg.tif");
    let aspect = gdal_layer("gdal_slopes_aspect_deg.tif");
    let (mut worst_slope, mut worst_aspect) = (0f32, 0f32);
    for (col, row) in interior() {
        let idx = row * 48 + col;
        worst_slope = worst_slope.max((ours.slope_deg[idx] - slope.get(col, row).unwrap()).abs());
        if let Some(reference) = aspect.get(col, row) {
            let diff = (ours.aspect_deg[idx] - reference).abs();
            worst_aspect = worst_aspect.max(diff.min(360.0 - diff));
        }
    }
    // gdaldem works in single precision; aspect on gentle ground amplifies that to about
    // 0.02 degrees (measured), slope stays within 1e-4.
    assert!(
        worst_slope < 1e-3,
        "slope differs from gdaldem by up to {worst_slope} degrees"
    );
    assert!(
        worst_aspect < 0.05,
        "aspect differs from gdaldem by up to {worst_aspect} degrees"
    );
}

#[test]
fn hillshade_matches_gdaldem_within_one_grey_level() {
    let dem = gdal_layer("gdal_slopes_dem.tif");
    for (name, sun) in [
        (
            "gdal_slopes_hillshade.tif",
            Sun {
                azimuth_deg: 315.0,
                altitude_deg: 45.0,
            },
        ),
        (
            "gdal_slopes_hillshade_az200_alt30.tif",
            Sun {
                azimuth_deg: 200.0,
                altitude_deg: 30.0,
            },
        ),
    ] {
        let ours = derivatives(&dem, sun);
        let reference = gdal_layer(name);
        for (col, row) in interior() {
            // gdaldem writes 1 + 254 cos(incidence) as a byte, 1 where the cell is in shadow.
            let expected = reference.get(col, row).unwrap();
            let got = 1.0 + 254.0 * ours.hillshade[row * 48 + col];
            assert!(
                (got - expected).abs() <= 1.0,
                "{name} ({col}, {row}): {got} vs {expected}"
            );
        }
    }
}
