//! Depression filling by priority-flood (Barnes, Lehman & Mulla 2014, *Computers &
//! Geosciences* 62:117-127) checked against closed forms, a grid filled by hand, and an
//! independent published algorithm: the direct form of Planchon & Darboux (2001), "A fast,
//! simple and versatile algorithm to fill the depressions of digital elevation models",
//! *Catena* 46:159-176, with a zero slope increment, which Barnes et al. (2014) name as giving
//! the same filled surface.

use forefield_engine::view::lakes::{fill_depressions, fill_depth_m, LakeMap};
use forefield_engine::Grid;
use forefield_reference_tests::local_geometry;

fn grid(n_cols: usize, n_rows: usize, cell_size_m: f64, values: Vec<f32>) -> Grid {
    Grid::from_values(local_geometry(n_cols, n_rows, cell_size_m), values)
}

/// A paraboloid bowl z = a r^2 on 101 x 101 cells of 10 m, centred on the middle cell.
fn paraboloid(a: f64) -> Grid {
    let values = (0..101 * 101)
        .map(|i| {
            let (dx, dy) = (
                ((i % 101) as f64 - 50.0) * 10.0,
                ((i / 101) as f64 - 50.0) * 10.0,
            );
            (a * (dx * dx + dy * dy)) as f32
        })
        .collect();
    grid(101, 101, 10.0, values)
}

#[test]
fn a_bowl_fills_exactly_to_its_lowest_rim_and_holds_the_paraboloid_volume() {
    // z = 0.001 r^2: the lowest edge cells are the middles of the sides, r = 500 m, z = 250 m.
    // Water fills every cell below the spill height to exactly that level, the lowest point
    // of the rim (the minimax-path level; Barnes et al. 2014, section 2). The volume of a
    // paraboloid filled to height S is half its circumscribing cylinder, pi S^2 / (2a)
    // (Archimedes, On Conoids and Spheroids); its area pi S / a.
    let a = 0.001;
    let bed = paraboloid(a);
    let spill = 250.0_f32;
    let filled = fill_depressions(&bed);
    for (idx, (&f, &z)) in filled.iter().zip(&bed.values).enumerate() {
        assert_eq!(f, z.max(spill), "cell {idx}");
    }
    let lakes = LakeMap::from_bed(&bed);
    assert_eq!(lakes.lakes.len(), 1);
    let lake = &lakes.lakes[0];
    assert_eq!(lake.level_m, spill);
    assert_eq!(lake.max_depth_m, spill);
    let s = f64::from(spill);
    let volume = std::f64::consts::PI * s * s / (2.0 * a);
    let area = std::f64::consts::PI * s / a;
    // The cell sum is the midpoint rule on 10 m cells: a few parts per thousand.
    assert!(
        (lake.volume_m3 / volume - 1.0).abs() < 3e-3,
        "{} vs {volume}",
        lake.volume_m3
    );
    assert!(
        (lake.area_m2 / area - 1.0).abs() < 1e-2,
        "{} vs {area}",
        lake.area_m2
    );
}

#[test]
fn a_notch_in_the_rim_sets_the_level() {
    // A channel cut at 180 m from the north edge into the same bowl: water stands at 180 m
    // (the notch is now the lowest way out), nowhere else.
    let mut bed = paraboloid(0.001);
    for row in 0..20 {
        let z = &mut bed.values[row * 101 + 50];
        *z = z.min(180.0);
    }
    let depth = fill_depth_m(&bed);
    for (idx, (&d, &z)) in depth.iter().zip(&bed.values).enumerate() {
        assert_eq!(d, (180.0 - z).max(0.0), "cell {idx}");
    }
}

#[test]
fn a_depression_next_to_a_lower_outlet_drains() {
    // A 4 m hollow inside a 9 m ring, except that one ring cell is a 3 m step down to a 2 m
    // edge: the hollow's water runs out through the gap, so nothing fills.
    #[rustfmt::skip]
    let bed = grid(5, 5, 10.0, vec![
        9.0, 9.0, 9.0, 9.0, 9.0,
        9.0, 9.0, 9.0, 9.0, 9.0,
        9.0, 9.0, 4.0, 3.0, 2.0,
        9.0, 9.0, 9.0, 9.0, 9.0,
        9.0, 9.0, 9.0, 9.0, 9.0,
    ]);
    assert!(fill_depth_m(&bed).iter().all(|&d| d == 0.0));
    // Raise the step above the hollow and the hollow holds water up to it.
    let mut closed = bed.clone();
    closed.values[13] = 6.0;
    assert_eq!(fill_depth_m(&closed)[12], 2.0);
}

#[test]
fn a_small_grid_matches_a_fill_by_hand() {
    // Worked by hand: the upper basin (2, 3, 3 m) spills over the 4 m notch in the west edge;
    // the lower pit (1 m) reaches it over the 6 m saddle, so it fills to 6 m; column 4 runs
    // down to its 2 m outlet in the south edge and holds nothing; the 7 m and 8 m knobs stand
    // above their water.
    #[rustfmt::skip]
    let bed = grid(6, 6, 10.0, vec![
        9.0, 9.0, 9.0, 9.0, 9.0, 9.0,
        9.0, 2.0, 3.0, 9.0, 6.0, 9.0,
        4.0, 3.0, 7.0, 9.0, 5.0, 9.0,
        9.0, 6.0, 9.0, 9.0, 4.0, 9.0,
        9.0, 1.0, 8.0, 9.0, 3.0, 9.0,
        9.0, 9.0, 9.0, 9.0, 2.0, 9.0,
    ]);
    #[rustfmt::skip]
    let by_hand = [
        0.0, 0.0, 0.0, 0.0, 0.0, 0.0,
        0.0, 2.0, 1.0, 0.0, 0.0, 0.0,
        0.0, 1.0, 0.0, 0.0, 0.0, 0.0,
        0.0, 0.0, 0.0, 0.0, 0.0, 0.0,
        0.0, 5.0, 0.0, 0.0, 0.0, 0.0,
        0.0, 0.0, 0.0, 0.0, 0.0, 0.0,
    ];
    assert_eq!(fill_depth_m(&bed), by_hand);
    // As lakes (100 m2 cells, thresholds 1 m and one cell): the upper basin of three cells at
    // 4 m holding (2 + 1 + 1) x 100 m3, and the pit at 6 m holding 500 m3.
    let lakes = LakeMap::from_bed_with(&bed, 1.0, 100.0);
    let summary: Vec<_> = lakes
        .lakes
        .iter()
        .map(|l| (l.cells.len(), l.level_m, l.max_depth_m, l.volume_m3))
        .collect();
    assert_eq!(summary, vec![(3, 4.0, 2.0, 400.0), (1, 6.0, 5.0, 500.0)]);
    // A 2.5 m minimum depth keeps only the pit; a 200 m2 minimum area only the basin.
    assert_eq!(LakeMap::from_bed_with(&bed, 2.5, 100.0).lakes.len(), 1);
    assert_eq!(
        LakeMap::from_bed_with(&bed, 1.0, 200.0).lakes[0].level_m,
        4.0
    );
}

/// Planchon & Darboux (2001), direct version with a zero increment: water starts infinitely
/// high inside and at the ground on the boundary (the edge and cells next to nodata), and is
/// lowered to the ground or to a neighbour's water until nothing changes.
fn planchon_darboux(bed: &Grid) -> Vec<f32> {
    let (nc, nr) = (bed.n_cols(), bed.n_rows());
    let neighbours = |idx: usize| {
        let (c, r) = ((idx % nc) as isize, (idx / nc) as isize);
        (-1..=1_isize)
            .flat_map(move |dr| (-1..=1_isize).map(move |dc| (c + dc, r + dr)))
            .filter(move |&(x, y)| (x, y) != (c, r))
            .filter(|&(x, y)| x >= 0 && y >= 0 && (x as usize) < nc && (y as usize) < nr)
            .map(move |(x, y)| y as usize * nc + x as usize)
    };
    let boundary = |idx: usize| {
        let (c, r) = (idx % nc, idx / nc);
        c == 0 || r == 0 || c + 1 == nc || r + 1 == nr || neighbours(idx).any(|n| bed.nodata[n])
    };
    let mut water: Vec<f32> = (0..bed.values.len())
        .map(|i| {
            if bed.nodata[i] {
                f32::NAN
            } else if boundary(i) {
                bed.values[i]
            } else {
                f32::INFINITY
            }
        })
        .collect();
    loop {
        let mut changed = false;
        for c in 0..water.len() {
            if bed.nodata[c] || water[c] <= bed.values[c] {
                continue;
            }
            for n in neighbours(c) {
                if bed.nodata[n] {
                    continue;
                }
                if bed.values[c] >= water[n] {
                    water[c] = bed.values[c];
                    changed = true;
                    break;
                }
                if water[c] > water[n] {
                    water[c] = water[n];
                    changed = true;
                }
            }
        }
        if !changed {
            return water;
        }
    }
}

#[test]
fn priority_flood_equals_planchon_darboux_on_rough_grids_with_holes() {
    // Seeded rough terrain (a linear congruential generator, Knuth's MMIX constants), summed
    // over a few cells so it has real basins, with nodata holes that drain.
    let mut state: u64 = 0x2545_f491_4f6c_dd1d;
    let mut next = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (state >> 40) as f32 / (1u64 << 24) as f32
    };
    for (n_cols, n_rows) in [(37, 23), (50, 50), (9, 61)] {
        let noise: Vec<f32> = (0..n_cols * n_rows).map(|_| next() * 20.0).collect();
        let values = (0..n_cols * n_rows)
            .map(|i| {
                let (c, r) = (i % n_cols, i / n_cols);
                let mut sum = 0.0;
                for (dc, dr) in [(0, 0), (1, 0), (0, 1), (1, 1)] {
                    sum += noise[(r + dr).min(n_rows - 1) * n_cols + (c + dc).min(n_cols - 1)];
                }
                sum + r as f32 * 0.5
            })
            .collect();
        let mut bed = grid(n_cols, n_rows, 25.0, values);
        for k in 0..(n_cols * n_rows / 40) {
            bed.nodata[(k * 7919 + 13) % (n_cols * n_rows)] = true;
        }
        let reference = planchon_darboux(&bed);
        let filled = fill_depressions(&bed);
        let mut n_filled = 0;
        for (idx, (&f, &w)) in filled.iter().zip(&reference).enumerate() {
            if bed.nodata[idx] {
                assert!(f.is_nan());
                continue;
            }
            assert_eq!(f, w, "{n_cols} x {n_rows}, cell {idx}");
            n_filled += usize::from(f > bed.values[idx]);
        }
        assert!(
            n_filled > 10,
            "only {n_filled} cells filled: the grid has too few pits"
        );
    }
}
