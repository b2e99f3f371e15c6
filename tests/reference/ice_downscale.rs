//! The transfer from the ice grid (100 m) to the plants' grid (25 m) must put a margin where
//! the ice surface meets the fine ground: the glacier margin is the line where the surface
//! and the bed meet (the definition of ice thickness; common practice, no source). An
//! invented valley wall: a bed rising 0.3 m per m eastwards with 12 m ridges running down it
//! 100 m apart (one ice cell, so the ice grid cannot see them), under a planar surface rising
//! 0.1 m per m, so the true margin wanders 60 m east and west from ridge to gully. (The
//! bilinear thickness used before puts 144 cells on the wrong side, up to 2 cells off.)
//! Through the block mean and back, every fine cell whose ice (at least 1 m, the engine's
//! cover threshold) disagrees with the surface-minus-bed truth lies within one fine cell of
//! the true margin, and each block keeps its volume.

use forefield_engine::base::grid::Grid;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::simulation::IceSimulation;
use forefield_reference_tests::utm_geometry;

const N: usize = 96;
const DX: f64 = 25.0;

fn surface_minus_bed(row: usize, col: usize) -> f64 {
    let (x, y) = ((col as f64 + 0.5) * DX, (row as f64 + 0.5) * DX);
    let bed = 2000.0 + 0.3 * x + 12.0 * (std::f64::consts::TAU * y / 100.0).sin();
    let surface = 2000.0 + 0.1 * x + 240.0;
    surface - bed
}

#[test]
fn margin_follows_the_fine_ground_within_one_cell() {
    let geometry = utm_geometry(N, N, DX);
    let mut bed = Vec::with_capacity(N * N);
    let mut ice = Vec::with_capacity(N * N);
    for row in 0..N {
        for col in 0..N {
            let x = (col as f64 + 0.5) * DX;
            let y = (row as f64 + 0.5) * DX;
            bed.push((2000.0 + 0.3 * x + 12.0 * (std::f64::consts::TAU * y / 100.0).sin()) as f32);
            ice.push(surface_minus_bed(row, col).max(0.0) as f32);
        }
    }
    let bed = Grid::from_values(geometry, bed);
    let ice = Grid::from_values(geometry, ice);
    let scenario = Scenario {
        n_years: 1,
        relaxation_years: 0,
        ..Scenario::default()
    };
    let run = IceSimulation::new(&bed, &ice, &scenario).expect("valid grids");
    assert_eq!(run.ice_grid_block(), 4);
    let fine = run.ice_thickness_m();

    let truth = |row: usize, col: usize| surface_minus_bed(row, col) >= 1.0;
    let (mut wrong, mut worst) = (0usize, 0usize);
    for row in 0..N {
        for col in 0..N {
            let modelled = fine[row * N + col] >= 1.0;
            if modelled == truth(row, col) {
                continue;
            }
            wrong += 1;
            // Chebyshev distance to the nearest cell on the other side of the true margin.
            let mut d = 1;
            'search: loop {
                for r in row.saturating_sub(d)..=(row + d).min(N - 1) {
                    for c in col.saturating_sub(d)..=(col + d).min(N - 1) {
                        if truth(r, c) != truth(row, col) {
                            break 'search;
                        }
                    }
                }
                d += 1;
            }
            worst = worst.max(d);
        }
    }
    assert!(
        worst <= 1,
        "{wrong} cells on the wrong side, the worst {worst} cells from the true margin"
    );

    // Each 4 x 4 block keeps the volume it had.
    for block_row in 0..N / 4 {
        for block_col in 0..N / 4 {
            let (mut before, mut after) = (0.0_f64, 0.0_f64);
            for row in block_row * 4..block_row * 4 + 4 {
                for col in block_col * 4..block_col * 4 + 4 {
                    before += f64::from(ice.values[row * N + col]);
                    after += f64::from(fine[row * N + col]);
                }
            }
            assert!(
                (after - before).abs() <= 1e-4 * before.max(1.0),
                "block ({block_row}, {block_col}): {before} m before, {after} m after"
            );
        }
    }
}
