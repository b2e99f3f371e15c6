//! Generator of the invented demo valley: surface DEM, ice thickness, bed and vegetation.
//!
//! Everything here is made up. The valley runs from a cirque headwall in the north to a
//! forested mouth in the south; a valley glacier fills its upper half, over an overdeepened
//! basin that will hold a lake once the ice is gone, with an older terminal moraine below
//! the present tongue. The grid is placed at open-ocean coordinates of UTM zone 26N
//! (EPSG:32626) so that it never coincides with a real place. Values come from smooth
//! closed-form shapes plus hashed value noise, so the output is identical on every machine.

use crate::base::grid::{Grid, GridGeometry};

pub use crate::plants::vegetation_code;

/// The demo valley's layers on one grid.
pub struct SampleValley {
    /// Ice surface where there is ice, ground elsewhere, metres above sea level.
    pub surface_m: Grid,
    /// Rock or sediment surface under the ice, metres above sea level.
    pub bed_m: Grid,
    /// Present ice thickness, metres.
    pub ice_thickness_m: Grid,
    /// Present vegetation as a stage code (see [`vegetation_code`]).
    pub vegetation: Grid,
}

/// Default size: 400 x 400 cells of 25 m (10 km square).
pub const SMALL_SIZE: usize = 400;
/// Benchmark size: 1024 x 1024 cells of 25 m (25.6 km square).
pub const LARGE_SIZE: usize = 1024;
/// Cell size of both samples, metres.
pub const CELL_SIZE_M: f64 = 25.0;

/// Builds the valley on an `n` x `n` grid of 25 m cells; the shapes scale with the grid.
pub fn generate(n: usize) -> SampleValley {
    let geometry = GridGeometry {
        n_cols: n,
        n_rows: n,
        cell_size_m: CELL_SIZE_M,
        west_m: 480_000.0,
        north_m: 4_990_000.0,
        epsg: Some(32626),
    };
    let cells = geometry.n_cells();
    let mut bed = vec![0f32; cells];
    let mut ice = vec![0f32; cells];
    let size_km = n as f64 * CELL_SIZE_M / 1000.0;
    for row in 0..n {
        for col in 0..n {
            let u = (col as f64 + 0.5) / n as f64;
            let v = (row as f64 + 0.5) / n as f64;
            let (bed_m, ice_m) = valley_at(u, v, size_km);
            bed[row * n + col] = bed_m as f32;
            ice[row * n + col] = ice_m as f32;
        }
    }
    let surface: Vec<f32> = bed.iter().zip(&ice).map(|(b, h)| b + h).collect();
    let surface_m = Grid::from_values(geometry, surface);
    let slope = crate::base::terrain::derivatives(&surface_m, crate::base::terrain::Sun::default())
        .slope_deg;
    let vegetation: Vec<f32> = (0..cells)
        .map(|idx| {
            let (row, col) = (idx / n, idx % n);
            let u = (col as f64 + 0.5) / n as f64;
            let v = (row as f64 + 0.5) / n as f64;
            f32::from(vegetation_at(
                f64::from(bed[idx]),
                f64::from(ice[idx]),
                slope[idx],
                (v, cross_valley(u, v)),
                idx,
            ))
        })
        .collect();
    SampleValley {
        bed_m: Grid::from_values(geometry, bed),
        ice_thickness_m: Grid::from_values(geometry, ice),
        vegetation: Grid::from_values(geometry, vegetation),
        surface_m,
    }
}

/// Position of the present ice front and the older moraine, as fractions of the valley length.
const TONGUE_V: f64 = 0.56;
const MORAINE_V: f64 = 0.66;
const HEAD_V: f64 = 0.0;
const BASIN_DEPTH_M: f64 = 110.0;

/// Distance across the valley from its winding centreline, as a fraction of the grid width.
fn cross_valley(u: f64, v: f64) -> f64 {
    (u - (0.5 + 0.07 * libm::sin(2.6 * v + 0.4))).abs()
}

/// Down-valley position of the older moraine's crest at `d` from the centreline: furthest
/// down in the middle and curving back up-valley towards the walls, as a terminal moraine
/// bows out where the tongue reached furthest.
fn moraine_v(d: f64) -> f64 {
    MORAINE_V - 2.0 * d * d
}

/// Half-width of the glacier at its moraine stage, as a fraction of the grid width.
const MORAINE_STAGE_HALF_WIDTH: f64 = 0.17;

fn valley_at(u: f64, v: f64, size_km: f64) -> (f64, f64) {
    let d = cross_valley(u, v);
    let floor = 2950.0 - 1550.0 * libm::pow(v, 0.85);
    let ridge = 2850.0 - 400.0 * v;
    // U-shaped trough up to a crest at d = 0.3, falling towards neighbouring valleys beyond.
    let cross = if d < 0.3 {
        libm::pow(d / 0.3, 1.5)
    } else {
        1.0 - 0.55 * libm::pow(((d - 0.3) / 0.2).min(1.0), 1.3)
    };
    let mut centreline = floor;
    // Cirque headwall closing the valley to the north.
    if v < 0.14 {
        let t = (0.14 - v) / 0.14;
        centreline += 320.0 * t * t;
    }
    let mut z = centreline + (ridge - centreline) * cross;
    // A side spur on the west wall and a hanging tributary notch on the east.
    z += 120.0 * gauss(u - 0.18, 0.06) * gauss(v - 0.72, 0.08);
    z -= 160.0 * gauss(u - 0.78, 0.05) * gauss(v - 0.35, 0.04) * (1.0 - gauss(d, 0.1));
    // Overdeepened basin under the present ice, dammed by a riegel below it.
    z -= BASIN_DEPTH_M * gauss(v - 0.42, 0.05) * gauss(d, 0.07);
    z += 60.0 * gauss(v - 0.495, 0.018) * gauss(d, 0.12);
    // Older terminal moraine arc below the present tongue.
    z += 28.0 * gauss(v - moraine_v(d), 0.012) * gauss(d, 0.14);
    // Rough rock: value noise with octaves from about 1.6 km down to 100 m.
    let noise = fractal_noise(u * size_km / 1.6, v * size_km / 1.6, 5);
    let wall = cross.min(1.0);
    z += 160.0 * noise * (0.15 + wall);
    // Gullies and spurs running down both walls.
    let gully = libm::sin(v * 38.0 + 3.0 * noise);
    z += 70.0 * gully * 4.0 * wall * (1.0 - wall);

    // Ice: a surface sloping down the valley and slightly convex across it; the thickness is
    // what lies between that surface and the bed, so the margin follows the valley walls.
    let ice = if v > HEAD_V && v < TONGUE_V {
        let along = ((TONGUE_V - v) / (TONGUE_V - HEAD_V)).sqrt();
        let head_taper = ((v - HEAD_V) / 0.08).min(1.0);
        let surface = centreline + 120.0 * along * head_taper - 30.0 * (d / 0.12) * (d / 0.12);
        (surface - z).max(0.0)
    } else {
        0.0
    };
    (z, if ice > 1.0 { ice } else { 0.0 })
}

/// Stage code of a cell at `(v, d)`: down-valley position and distance from the centreline.
fn vegetation_at(bed_m: f64, ice_m: f64, slope_deg: f32, (v, d): (f64, f64), idx: usize) -> u8 {
    use vegetation_code::*;
    if ice_m > 0.0 {
        return ICE;
    }
    let jitter = 40.0 * (hash(idx as u64 ^ 0x9e37_79b9) - 0.5);
    let z = bed_m + jitter;
    // Ground inside the moraine, left by the ice since its moraine stage, is still young and
    // barely vegetated: pioneers just inside the crest, bare till nearer the present ice.
    let front = moraine_v(d) + 0.01;
    let edge = MORAINE_STAGE_HALF_WIDTH + 0.015 * (hash(idx as u64 ^ 0x7f4a_7c15) - 0.5);
    if d < edge && v < front && bed_m < 2700.0 && slope_deg < 30.0 {
        return if v > front - 0.05 || d > edge - 0.03 {
            PIONEER
        } else {
            BARE
        };
    }
    if slope_deg > 42.0 || z > 2750.0 {
        BARE
    } else if z > 2550.0 {
        PIONEER
    } else if z > 2250.0 {
        MEADOW
    } else if z > 2050.0 {
        SHRUBLAND
    } else if z > 1900.0 {
        YOUNG_FOREST
    } else {
        MATURE_FOREST
    }
}

fn gauss(x: f64, width: f64) -> f64 {
    let t = x / width;
    libm::exp(-(t * t))
}

/// Hash of a 64-bit key to [0, 1) (SplitMix64 finaliser; Steele, Lea & Flood 2014).
fn hash(key: u64) -> f64 {
    let mut z = key.wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^= z >> 31;
    (z >> 11) as f64 / (1u64 << 53) as f64
}

fn lattice(ix: i64, iy: i64, octave: u32) -> f64 {
    let key = (ix as u64).wrapping_mul(0x0001_0000_01b3)
        ^ (iy as u64).rotate_left(29)
        ^ u64::from(octave) << 58;
    2.0 * hash(key) - 1.0
}

/// Smoothly interpolated lattice noise in [-1, 1], summed over octaves.
fn fractal_noise(x: f64, y: f64, octaves: u32) -> f64 {
    let mut total = 0.0;
    let mut amplitude = 1.0;
    let mut norm = 0.0;
    for octave in 0..octaves {
        let scale = f64::from(1u32 << octave);
        let (px, py) = (x * scale, y * scale);
        let (ix, iy) = (px.floor() as i64, py.floor() as i64);
        let (fx, fy) = (px - px.floor(), py - py.floor());
        let (sx, sy) = (fx * fx * (3.0 - 2.0 * fx), fy * fy * (3.0 - 2.0 * fy));
        let top = lattice(ix, iy, octave) * (1.0 - sx) + lattice(ix + 1, iy, octave) * sx;
        let bottom =
            lattice(ix, iy + 1, octave) * (1.0 - sx) + lattice(ix + 1, iy + 1, octave) * sx;
        total += amplitude * (top * (1.0 - sy) + bottom * sy);
        norm += amplitude;
        amplitude *= 0.5;
    }
    total / norm
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn valley_has_a_glacier_a_basin_and_forest() {
        let valley = generate(100);
        let ice_cells = valley
            .ice_thickness_m
            .values
            .iter()
            .filter(|&&h| h > 1.0)
            .count();
        assert!(ice_cells > 300 && ice_cells < 3000, "{ice_cells} ice cells");
        let max_ice = valley.ice_thickness_m.value_range().unwrap().1;
        assert!(max_ice > 150.0 && max_ice < 400.0, "max ice {max_ice}");
        let forest = valley
            .vegetation
            .values
            .iter()
            .filter(|&&c| c as u8 == vegetation_code::MATURE_FOREST)
            .count();
        assert!(forest > 100, "{forest} forest cells");
        let (lo, hi) = valley.surface_m.value_range().unwrap();
        assert!(lo > 1200.0 && hi < 3900.0, "{lo}..{hi}");
    }

    #[test]
    fn basin_under_the_ice_is_closed_by_the_riegel() {
        // Along the centreline the bed must dip in the basin and rise again before the tongue.
        let bed_at = |v: f64| {
            let centre_u = 0.5 + 0.07 * libm::sin(2.6 * v + 0.4);
            valley_at(centre_u, v, 10.0).0
        };
        let basin_floor = (380..460)
            .map(|i| bed_at(i as f64 / 1000.0))
            .fold(f64::MAX, f64::min);
        let sill = bed_at(0.495);
        assert!(sill - basin_floor > 15.0, "sill {sill} basin {basin_floor}");
        let (_, ice_over_basin) =
            valley_at(0.5 + 0.07 * libm::sin(2.6f64 * 0.42 + 0.4), 0.42, 10.0);
        assert!(
            ice_over_basin > 100.0,
            "{ice_over_basin} m of ice over the basin"
        );
    }

    #[test]
    fn generation_is_deterministic() {
        assert_eq!(generate(64).surface_m, generate(64).surface_m);
    }
}
