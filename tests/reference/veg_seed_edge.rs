//! Seed from beyond the grid edge. A forefield whose DEM is clipped just inside a forest
//! should get about the seed it gets when the whole forest is on the grid: the grid edge is
//! where the DEM was cut, not a barrier to seed (a fact of the trade, no source). On an
//! invented flat landscape, forest to the west and ice melting in year 1 to the east, the
//! cover after 15 years on the first 500 m of the forefield is compared between a wide grid
//! (forest 2 km deep, the edges 1-2 km away) and the same cells clipped 2 cells (50 m) into
//! the forest. Measured, mean of seeds 1-3: the mirrored edge 7 % short of the wide grid,
//! seed lost at the edge 14 % short. The check: mirrored within 10 %, lost short by more than
//! one and a half times that.

use forefield_engine::plants::vegetation::{SeedEdge, VegetationModel, VegetationParams};
use forefield_engine::plants::vegetation_code;
use forefield_reference_tests::local_geometry;

const CELL_M: f64 = 25.0;
/// The wide grid: forest in columns 0-79, ice in 80-159; 120 rows.
const WIDE: (usize, usize) = (160, 120);
/// The clipped grid: columns 78-159, rows 40-79 of the wide one.
const CLIP_COL: usize = 78;
const CLIP_ROW: usize = 40;
const CLIPPED: (usize, usize) = (82, 40);
const FOREST_COLS: usize = 80;
const YEARS: i32 = 15;

/// Mean total cover over the wide grid's columns 80-99, rows 40-79, after the years.
fn forefield_cover(
    col0: usize,
    row0: usize,
    size: (usize, usize),
    edge: SeedEdge,
    seed: u64,
) -> f64 {
    let (n_cols, n_rows) = size;
    let geometry = local_geometry(n_cols, n_rows, CELL_M);
    let n = n_cols * n_rows;
    let forest = |i: usize| col0 + i % n_cols < FOREST_COLS;
    let stages: Vec<u8> = (0..n)
        .map(|i| {
            if forest(i) {
                vegetation_code::MATURE_FOREST
            } else {
                vegetation_code::ICE
            }
        })
        .collect();
    let ice: Vec<f32> = (0..n).map(|i| if forest(i) { 0.0 } else { 50.0 }).collect();
    let params = VegetationParams {
        seed_edge: edge,
        ..VegetationParams::default()
    };
    let elevation = vec![1500.0; n];
    let slope = vec![0.0; n];
    let mut model = VegetationModel::new(
        &params,
        &geometry,
        &elevation,
        &slope,
        &ice,
        Some(&stages),
        0.0,
        seed,
    )
    .expect("valid model");
    let no_ice = vec![0.0; n];
    let exposed: Vec<i32> = (0..n).map(|i| if forest(i) { -1 } else { 1 }).collect();
    for year in 1..=YEARS {
        model.step_year(year, &no_ice, &exposed, 0.0);
    }
    let (mut sum, mut cells) = (0.0, 0);
    for row in CLIP_ROW..CLIP_ROW + CLIPPED.1 {
        for col in FOREST_COLS..FOREST_COLS + 20 {
            let i = (row - row0) * n_cols + (col - col0);
            sum += (0..model.n_types())
                .map(|t| f64::from(model.cover_of(t)[i]))
                .sum::<f64>();
            cells += 1;
        }
    }
    sum / f64::from(cells)
}

#[test]
fn a_clipped_forest_still_seeds_the_forefield() {
    // Establishment is drawn per cell: three seeds, averaged.
    let mean = |col0, row0, size, edge| {
        (1..=3)
            .map(|seed| forefield_cover(col0, row0, size, edge, seed))
            .sum::<f64>()
            / 3.0
    };
    let wide = mean(0, 0, WIDE, SeedEdge::Lost);
    let mirrored = mean(CLIP_COL, CLIP_ROW, CLIPPED, SeedEdge::Mirrored);
    let lost = mean(CLIP_COL, CLIP_ROW, CLIPPED, SeedEdge::Lost);
    assert!(wide > 0.01, "no cover on the wide grid's forefield: {wide}");
    let (short_mirrored, short_lost) = (1.0 - mirrored / wide, 1.0 - lost / wide);
    assert!(
        short_mirrored.abs() <= 0.10,
        "mirrored edge: {mirrored} against {wide} on the wide grid"
    );
    assert!(
        short_lost > 1.5 * short_mirrored.abs(),
        "seed lost at the edge: {lost}, mirrored {mirrored}, wide grid {wide}"
    );
}
