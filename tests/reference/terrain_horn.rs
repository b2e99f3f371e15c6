//! Slope, aspect and hillshade by Horn (1981) checked against hand-worked windows and against
//! GDAL.
//!
//! Method: Horn, B. K. P. (1981), "Hill shading and the reflectance map", Proc. IEEE
//! 69(1):14-47: `dz/dx = ((c + 2f + i) - (a + 2d + g)) / (8 dx)` and
//! `dz/dy = ((g + 2h + i) - (a + 2b + c)) / (8 dx)`, with `a b c / d e f / g h i` the window
//! rows from north to south, so `dz/dy` is positive where the ground rises southward. Slope is
//! `atan(hypot(dz/dx, dz/dy))`; aspect is the downhill compass direction
//! `atan2(-dz/dx, dz/dy)`, degrees clockwise from north; hillshade is the Lambertian
//! `cos(zenith) cos(slope) + sin(zenith) sin(slope) cos(azimuth - aspect)`, clamped at zero.
//!
//! Worked windows: four invented 3 x 3 windows, each worked by hand from those equations in
//! its comment (sun at azimuth 315, altitude 45, so zenith 45 and cos = sin = 0.70710678).
//! Independent reference: GDAL 3.6.2 `gdaldem` (Horn's method is its default) on
//! `tests/fixtures/slopes.asc`.

use forefield_engine::base::terrain::{
    aspect_deg, derivatives, hillshade_value, horn_gradient, slope_deg, Sun,
};
use forefield_engine::io::geotiff::read_geotiff;
use forefield_engine::{Grid, GridGeometry};
use forefield_reference_tests::fixture;

/// North-west light at 45 degrees, the sun of every worked window.
const SUN: Sun = Sun {
    azimuth_deg: 315.0,
    altitude_deg: 45.0,
};

/// A 3 x 3 grid from its rows, north to south, each row west to east.
fn window(rows: [[f32; 3]; 3], cell_size_m: f64) -> Grid {
    let geometry = GridGeometry {
        n_cols: 3,
        n_rows: 3,
        cell_size_m,
        west_m: 0.0,
        north_m: 0.0,
        epsg: None,
    };
    Grid::from_values(geometry, rows.concat())
}

/// Hand-worked answer for the centre cell of a window.
struct Expected {
    /// (dz/dx eastward, dz/dy southward).
    gradient: (f64, f64),
    slope_deg: f64,
    aspect_deg: f64,
    /// Lambertian hillshade in [0, 1].
    hillshade: f64,
}

/// Checks the centre cell two ways: the f64 cell functions, and the f32 layers of
/// `derivatives`. Every window holds whole numbers (exact in f32), so the f64 path agrees to
/// rounding (1e-9); the f32 layers carry about 7 significant digits, so angles near 250
/// degrees are good to about 2e-5 degrees (tolerance 1e-4) and hillshade to about 1e-7
/// (tolerance 1e-6).
fn check_centre(dem: &Grid, want: &Expected) {
    let g = horn_gradient(dem, 1, 1).unwrap();
    assert!(
        (g.0 - want.gradient.0).abs() < 1e-9 && (g.1 - want.gradient.1).abs() < 1e-9,
        "gradient {g:?}, expected {:?}",
        want.gradient
    );
    let slope = slope_deg(g);
    assert!((slope - want.slope_deg).abs() < 1e-9, "slope {slope}");
    let aspect = aspect_deg(g).unwrap();
    assert!((aspect - want.aspect_deg).abs() < 1e-9, "aspect {aspect}");
    let shade = hillshade_value(g, SUN);
    assert!((shade - want.hillshade).abs() < 1e-9, "hillshade {shade}");

    let layers = derivatives(dem, SUN);
    let centre = 4;
    let slope = f64::from(layers.slope_deg[centre]);
    assert!((slope - want.slope_deg).abs() < 1e-4, "slope layer {slope}");
    let aspect = f64::from(layers.aspect_deg[centre]);
    assert!(
        (aspect - want.aspect_deg).abs() < 1e-4,
        "aspect layer {aspect}"
    );
    let shade = f64::from(layers.hillshade[centre]);
    assert!(
        (shade - want.hillshade).abs() < 1e-6,
        "hillshade layer {shade}"
    );
}

#[test]
fn worked_plane_tilted_east() {
    // Every row 112 109 106, cell 4 m: the ground falls 3 m per cell eastward.
    // dz/dx = ((106 + 2*106 + 106) - (112 + 2*112 + 112)) / (8*4) = (424 - 448) / 32 = -0.75
    // dz/dy = ((112 + 2*109 + 106) - (112 + 2*109 + 106)) / 32 = (436 - 436) / 32 = 0
    // slope = atan(0.75) = 36.869897646 degrees (cos 0.8, sin 0.6)
    // aspect = atan2(0.75, 0) = 90 degrees (faces east)
    // shade = 0.70710678 * 0.8 + 0.70710678 * 0.6 * cos(315 - 90 = 225 degrees)
    //       = 0.56568542 - 0.3 = 0.265685425
    let dem = window(
        [
            [112.0, 109.0, 106.0],
            [112.0, 109.0, 106.0],
            [112.0, 109.0, 106.0],
        ],
        4.0,
    );
    check_centre(
        &dem,
        &Expected {
            gradient: (-0.75, 0.0),
            slope_deg: 36.869_897_645_844,
            aspect_deg: 90.0,
            hillshade: 0.265_685_424_949,
        },
    );
}

#[test]
fn worked_plane_tilted_north_west() {
    // z = 100 + 2 col + 2 row, cell 2 m: the ground falls 2 m per cell westward and northward.
    // dz/dx = ((104 + 2*106 + 108) - (100 + 2*102 + 104)) / (8*2) = (424 - 408) / 16 = 1
    // dz/dy = ((104 + 2*106 + 108) - (100 + 2*102 + 104)) / 16 = (424 - 408) / 16 = 1
    // slope = atan(sqrt 2) = 54.735610317 degrees (cos 1/sqrt 3, sin sqrt(2/3))
    // aspect = atan2(-1, 1) = -45, so 315 degrees (faces north-west, into the sun)
    // shade = 0.70710678 * 0.57735027 + 0.70710678 * 0.81649658 * cos(0)
    //       = 0.40824829 + 0.57735027 = (1 + sqrt 2) / sqrt 6 = 0.985598560
    let dem = window(
        [
            [100.0, 102.0, 104.0],
            [102.0, 104.0, 106.0],
            [104.0, 106.0, 108.0],
        ],
        2.0,
    );
    check_centre(
        &dem,
        &Expected {
            gradient: (1.0, 1.0),
            slope_deg: 54.735_610_317_245,
            aspect_deg: 315.0,
            hillshade: 0.985_598_559_653,
        },
    );
}

#[test]
fn worked_irregular_window() {
    // Rows 148 152 161 / 145 150 158 / 140 147 155, cell 10 m: rises eastward, falls southward.
    // dz/dx = ((161 + 2*158 + 155) - (148 + 2*145 + 140)) / (8*10) = (632 - 578) / 80 = 0.675
    // dz/dy = ((140 + 2*147 + 155) - (148 + 2*152 + 161)) / 80 = (589 - 613) / 80 = -0.3
    // slope = atan(hypot(0.675, 0.3)) = atan(0.738664335) = 36.451960087 degrees
    //   (cos 0.804355310, sin 0.594148580)
    // aspect = atan2(-0.675, -0.3) = 180 + atan(0.675 / 0.3) = 180 + 66.037511025
    //        = 246.037511025 degrees (faces west-south-west)
    // shade = 0.70710678 * 0.80435531 + 0.70710678 * 0.59414858 * cos(315 - 246.03751103)
    //       = 0.56876509 + 0.42012649 * 0.35897908 = 0.719581715
    let dem = window(
        [
            [148.0, 152.0, 161.0],
            [145.0, 150.0, 158.0],
            [140.0, 147.0, 155.0],
        ],
        10.0,
    );
    check_centre(
        &dem,
        &Expected {
            gradient: (0.675, -0.3),
            slope_deg: 36.451_960_087_127,
            aspect_deg: 246.037_511_025_422,
            hillshade: 0.719_581_714_750,
        },
    );
}

#[test]
fn worked_window_30_m_cells_in_shadow() {
    // Rows 980 975 960 / 950 940 930 / 905 890 880, cell 30 m: steep ground facing away from
    // the sun, so the hillshade is clamped at zero.
    // dz/dx = ((960 + 2*930 + 880) - (980 + 2*950 + 905)) / (8*30) = (3700 - 3785) / 240
    //       = -85 / 240 = -0.354166667
    // dz/dy = ((905 + 2*890 + 880) - (980 + 2*975 + 960)) / 240 = (3565 - 3890) / 240
    //       = -325 / 240 = -1.354166667
    // slope = atan(hypot(85, 325) / 240) = atan(1.399714753) = 54.456800021 degrees
    //   (cos 0.581316619, sin 0.813677447)
    // aspect = atan2(85/240, -325/240) = 180 - atan(85 / 325) = 180 - 14.656751116
    //        = 165.343248884 degrees (faces south-south-east)
    // unclamped = 0.70710678 * 0.58131662 + 0.70710678 * 0.81367745 * cos(315 - 165.34324888)
    //           = 0.41105292 + 0.57535684 * (-0.86301447) = -0.085488355, clamped to 0
    let dem = window(
        [
            [980.0, 975.0, 960.0],
            [950.0, 940.0, 930.0],
            [905.0, 890.0, 880.0],
        ],
        30.0,
    );
    check_centre(
        &dem,
        &Expected {
            gradient: (-85.0 / 240.0, -325.0 / 240.0),
            slope_deg: 54.456_800_021_410,
            aspect_deg: 165.343_248_884_240,
            hillshade: 0.0,
        },
    );
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
