//! Tree migration on uniform suitable ground with default traits, against the Holocene
//! spread rates of trees: 10^2-10^3 m a^-1 from fat-tailed dispersal (Clark 1998, "Why trees
//! migrate so fast", Am. Nat. 152(2):204-224), >= 500 m a^-1 on isochrone maps (Birks 1989,
//! J. Biogeogr. 16:503-540), 60-260 m a^-1 with northern microrefugia and early-successional
//! trees faster (Feurdean et al. 2013, PLoS ONE 8:e71797), < 100 m a^-1 for beech
//! (McLachlan, Clark & Manos 2005, Ecology 86, from memory). SCIENCE-CHECKS section 10 turns
//! these into the window 50-1000 m a^-1, pioneer trees faster than late-successional ones.

use forefield_engine::ice::exposure::ICE_FREE_AT_START;
use forefield_engine::plants::pft::GrowthForm;
use forefield_engine::plants::vegetation::{VegetationModel, VegetationParams};
use forefield_engine::plants::vegetation_code;
use forefield_reference_tests::local_geometry;

const CELL_M: f64 = 25.0;

/// Mean cover a column band must reach to count as behind the front: presence at plot
/// level, as in the chronosequence check (common practice, no source).
const FRONT_COVER: f32 = 0.01;

/// Position (m from the west edge) of the front of type `t`: the first column, going
/// east, whose mean cover over the central rows falls below [`FRONT_COVER`]. Outposts
/// ahead of the continuous stand do not count until the stand reaches them.
fn front_m(m: &VegetationModel, t: usize, n_cols: usize, rows: std::ops::Range<usize>) -> f64 {
    let cover = m.cover_of(t);
    let n_band = rows.len() as f32;
    for col in 0..n_cols {
        let mean: f32 = rows.clone().map(|r| cover[r * n_cols + col]).sum::<f32>() / n_band;
        if mean < FRONT_COVER {
            return col as f64 * CELL_M;
        }
    }
    n_cols as f64 * CELL_M
}

#[test]
fn tree_fronts_advance_at_holocene_rates_pioneers_first() {
    // West: 40 columns of mature forest as the seed source; east: meadow on ground at 1000 m
    // (13.5 degrees C growing season, well above the treeline), flat, soil already formed
    // enough for every tree type. Wide enough north-south that the edges do not matter to
    // the central rows.
    let (n_cols, n_rows) = (1200, 120);
    let g = local_geometry(n_cols, n_rows, CELL_M);
    let n = g.n_cells();
    let elevation = vec![1000.0f32; n];
    let slope = vec![0.0f32; n];
    let ice = vec![0.0f32; n];
    let exposed = vec![ICE_FREE_AT_START; n];
    let stages: Vec<u8> = (0..n)
        .map(|i| {
            if i % n_cols < 40 {
                vegetation_code::MATURE_FOREST
            } else {
                vegetation_code::MEADOW
            }
        })
        .collect();
    let params = VegetationParams::default();
    let mut m = VegetationModel::new(&params, &g, &elevation, &slope, &ice, Some(&stages), 0.0, 5)
        .expect("valid model");
    let trees: Vec<usize> = params
        .types
        .iter()
        .enumerate()
        .filter(|(_, t)| t.growth_form == GrowthForm::Tree)
        .map(|(i, _)| i)
        .collect();
    let band = n_rows / 2 - 20..n_rows / 2 + 20;
    // Speed as the slope over late years, after the start-up lag (SCIENCE-CHECKS 9).
    let (early, last) = (60, 120);
    let mut at_early = vec![0.0; trees.len()];
    for year in 1..=last {
        m.step_year(year, &ice, &exposed, 0.0);
        if year == early {
            for (k, &t) in trees.iter().enumerate() {
                at_early[k] = front_m(&m, t, n_cols, band.clone());
            }
        }
    }
    let speeds: Vec<f64> = trees
        .iter()
        .enumerate()
        .map(|(k, &t)| {
            (front_m(&m, t, n_cols, band.clone()) - at_early[k]) / f64::from(last - early)
        })
        .collect();
    for (k, &t) in trees.iter().enumerate() {
        assert!(
            (50.0..=1000.0).contains(&speeds[k]),
            "{}: {} m/a outside 50-1000 m/a",
            params.types[t].name,
            speeds[k]
        );
    }
    // Pioneer trees (the shade-intolerant type) ahead of late-successional ones (Feurdean
    // et al. 2013: early-successional trees spread faster).
    let by_tolerance = |k: usize| params.types[trees[k]].shade_tolerance;
    let pioneer = (0..trees.len())
        .min_by(|&a, &b| by_tolerance(a).total_cmp(&by_tolerance(b)))
        .expect("tree types");
    let late = (0..trees.len())
        .max_by(|&a, &b| by_tolerance(a).total_cmp(&by_tolerance(b)))
        .expect("tree types");
    assert!(
        speeds[pioneer] > speeds[late],
        "pioneer trees {} m/a not faster than late-successional {} m/a",
        speeds[pioneer],
        speeds[late]
    );
}
