//! Slope, aspect and hillshade by Horn's (1981) method.
//!
//! Horn, B. K. P. (1981), "Hill shading and the reflectance map", Proc. IEEE 69(1):14-47.
//! Gradients use the 3 x 3 weighted differences
//! `dz/dx = ((c + 2f + i) - (a + 2d + g)) / (8 dx)` and
//! `dz/dy = ((g + 2h + i) - (a + 2b + c)) / (8 dx)` with `a b c / d e f / g h i` the window
//! from north-west to south-east, so `dz/dy` is positive when the ground rises southward.
//! Hillshade is the Lambertian reflectance
//! `cos(zenith) cos(slope) + sin(zenith) sin(slope) cos(azimuth - aspect)`, clamped at zero.
//!
//! Neighbours off the grid or at nodata are extrapolated linearly from the centre and the
//! opposite neighbour (`2e - opposite`); a corner with both missing takes the plane through
//! its two side neighbours, and a side with both missing takes the centre value. Planar
//! ground so keeps its true slope right up to the grid edge.

use crate::base::grid::Grid;
use crate::base::load_error::{LoadError, LoadProblem};

/// Elevations a DEM may hold, metres: below the lowest dry land (about -430 m) or above the
/// highest summit (about 8850 m) means wrong units or a broken file (common practice, no
/// source).
pub const ELEVATION_LIMITS_M: (f32, f32) = (-500.0, 9000.0);

/// Checks that a DEM's values are plausible elevations in metres; returns their range.
pub fn check_elevations(dem: &Grid, source_name: &str) -> Result<(f32, f32), LoadError> {
    let (lo, hi) = dem
        .value_range()
        .ok_or_else(|| LoadError::new(source_name, LoadProblem::AllNodata))?;
    let (min, max) = ELEVATION_LIMITS_M;
    for value in [lo, hi] {
        if !(min..=max).contains(&value) {
            let problem = LoadProblem::ValueOutOfRange {
                what: "elevation",
                value: f64::from(value),
                unit: "m",
                min: f64::from(min),
                max: f64::from(max),
            };
            return Err(LoadError::new(source_name, problem));
        }
    }
    Ok((lo, hi))
}

/// Sun position for hillshading.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Sun {
    /// Compass direction the light comes from, degrees clockwise from north.
    pub azimuth_deg: f64,
    /// Angle of the sun above the horizon, degrees.
    pub altitude_deg: f64,
}

impl Default for Sun {
    /// North-west light at 45 degrees: the cartographic convention that avoids relief
    /// inversion (common practice, no source).
    fn default() -> Self {
        Sun {
            azimuth_deg: 315.0,
            altitude_deg: 45.0,
        }
    }
}

/// Horn gradient at one cell: (dz/dx eastward, dz/dy southward), both dimensionless.
/// `None` at a nodata cell.
pub fn horn_gradient(dem: &Grid, col: usize, row: usize) -> Option<(f64, f64)> {
    let centre = f64::from(dem.get(col, row)?);
    let (nc, nr) = (dem.n_cols() as isize, dem.n_rows() as isize);
    let at = |dc: isize, dr: isize| -> Option<f64> {
        let (c, r) = (col as isize + dc, row as isize + dr);
        if c < 0 || r < 0 || c >= nc || r >= nr {
            return None;
        }
        dem.get(c as usize, r as usize).map(f64::from)
    };
    // Side neighbours first: extrapolate through the centre, else take the centre.
    let side = |dc: isize, dr: isize| -> f64 {
        at(dc, dr)
            .unwrap_or_else(|| at(-dc, -dr).map_or(centre, |opposite| 2.0 * centre - opposite))
    };
    let (b, d, f, h) = (side(0, -1), side(-1, 0), side(1, 0), side(0, 1));
    // Corners: the value itself, else through the centre, else the plane of the two sides.
    let corner = |dc: isize, dr: isize| -> f64 {
        at(dc, dr).unwrap_or_else(|| match at(-dc, -dr) {
            Some(opposite) => 2.0 * centre - opposite,
            None => side(dc, 0) + side(0, dr) - centre,
        })
    };
    let (a, c, g, i) = (corner(-1, -1), corner(1, -1), corner(-1, 1), corner(1, 1));
    let eight_dx = 8.0 * dem.geometry.cell_size_m;
    let dz_dx = ((c + 2.0 * f + i) - (a + 2.0 * d + g)) / eight_dx;
    let dz_dy = ((g + 2.0 * h + i) - (a + 2.0 * b + c)) / eight_dx;
    Some((dz_dx, dz_dy))
}

/// Slope angle in degrees from a Horn gradient.
pub fn slope_deg(gradient: (f64, f64)) -> f64 {
    libm::atan(libm::hypot(gradient.0, gradient.1)).to_degrees()
}

/// Compass direction the slope faces (downhill), degrees clockwise from north in [0, 360);
/// `None` on flat ground.
pub fn aspect_deg(gradient: (f64, f64)) -> Option<f64> {
    let (dz_dx, dz_dy) = gradient;
    if dz_dx == 0.0 && dz_dy == 0.0 {
        return None;
    }
    // Downhill points along -grad z; east = -dz_dx, north = +dz_dy (dz_dy is southward).
    let aspect = libm::atan2(-dz_dx, dz_dy).to_degrees();
    Some(if aspect < 0.0 { aspect + 360.0 } else { aspect })
}

/// Lambertian hillshade in [0, 1] from a Horn gradient.
pub fn hillshade_value(gradient: (f64, f64), sun: Sun) -> f64 {
    let zenith = (90.0 - sun.altitude_deg).to_radians();
    let slope = libm::atan(libm::hypot(gradient.0, gradient.1));
    let cos_incidence = match aspect_deg(gradient) {
        Some(aspect) => {
            libm::cos(zenith) * libm::cos(slope)
                + libm::sin(zenith)
                    * libm::sin(slope)
                    * libm::cos((sun.azimuth_deg - aspect).to_radians())
        }
        None => libm::cos(zenith),
    };
    cos_incidence.max(0.0)
}

/// Slope, aspect and hillshade layers for a whole DEM.
#[derive(Clone, Debug, PartialEq)]
pub struct TerrainDerivatives {
    /// Slope, degrees; NaN at nodata.
    pub slope_deg: Vec<f32>,
    /// Downhill compass direction, degrees; NaN at nodata and on flat ground.
    pub aspect_deg: Vec<f32>,
    /// Hillshade in [0, 1]; NaN at nodata.
    pub hillshade: Vec<f32>,
}

/// Computes slope, aspect and hillshade for every cell of a DEM.
pub fn derivatives(dem: &Grid, sun: Sun) -> TerrainDerivatives {
    let n = dem.geometry.n_cells();
    let mut out = TerrainDerivatives {
        slope_deg: vec![f32::NAN; n],
        aspect_deg: vec![f32::NAN; n],
        hillshade: vec![f32::NAN; n],
    };
    for row in 0..dem.n_rows() {
        for col in 0..dem.n_cols() {
            let Some(gradient) = horn_gradient(dem, col, row) else {
                continue;
            };
            let idx = row * dem.n_cols() + col;
            out.slope_deg[idx] = slope_deg(gradient) as f32;
            out.aspect_deg[idx] = aspect_deg(gradient).map_or(f32::NAN, |a| a as f32);
            out.hillshade[idx] = hillshade_value(gradient, sun) as f32;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::base::grid::GridGeometry;

    fn grid_3x3(values: [f32; 9], cell: f64) -> Grid {
        let geometry = GridGeometry {
            n_cols: 3,
            n_rows: 3,
            cell_size_m: cell,
            west_m: 0.0,
            north_m: 0.0,
            epsg: None,
        };
        Grid::from_values(geometry, values.to_vec())
    }

    #[test]
    fn plane_rising_east_faces_west() {
        // z = 10 * col: dz/dx = 10 / 10 m = 1, slope 45 degrees, faces west.
        let dem = grid_3x3([0.0, 10.0, 20.0, 0.0, 10.0, 20.0, 0.0, 10.0, 20.0], 10.0);
        let g = horn_gradient(&dem, 1, 1).unwrap();
        assert!((slope_deg(g) - 45.0).abs() < 1e-12);
        assert!((aspect_deg(g).unwrap() - 270.0).abs() < 1e-12);
        // Edge cells extrapolate and see the same plane.
        let edge = horn_gradient(&dem, 0, 0).unwrap();
        assert!((edge.0 - 1.0).abs() < 1e-12 && edge.1.abs() < 1e-12);
    }

    #[test]
    fn flat_ground_is_lit_by_cos_zenith() {
        let dem = grid_3x3([5.0; 9], 10.0);
        let g = horn_gradient(&dem, 1, 1).unwrap();
        assert_eq!(aspect_deg(g), None);
        let shade = hillshade_value(
            g,
            Sun {
                azimuth_deg: 315.0,
                altitude_deg: 30.0,
            },
        );
        assert!((shade - 0.5).abs() < 1e-12);
    }
}
