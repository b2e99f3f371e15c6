//! Snow on steep ground through the whole ice model: the mass-conserving gravitational
//! transport and deposition of Gruber (2007, Water Resour. Res. 43, W06412). On an invented
//! cirque (a 60 degree headwall above a 5 degree floor holding a glacier), with the flow all
//! but switched off so only the balance acts: the headwall holds no accumulated ice after 20
//! years, while without the redistribution it holds 20 years of snowfall; and the total mass
//! gained is the same with and without it, to round-off (the transport only moves snow).

use forefield_engine::base::grid::Grid;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::simulation::IceSimulation;
use forefield_reference_tests::utm_geometry;

const N: usize = 40;
const DX: f64 = 100.0;
const WALL_ROWS: usize = 12;

/// Bed and starting ice: the wall rises northwards over rows 0-11, the floor below it holds
/// 30 m of ice from row 14 down.
fn cirque() -> (Grid, Grid) {
    let geometry = utm_geometry(N, N, DX);
    let wall = f64::tan(60f64.to_radians());
    let floor = f64::tan(5f64.to_radians());
    let mut bed = Vec::with_capacity(N * N);
    let mut ice = Vec::with_capacity(N * N);
    for row in 0..N {
        for _col in 0..N {
            let z = 2000.0
                + (N - 1 - row) as f64 * DX * floor
                + WALL_ROWS.saturating_sub(row) as f64 * DX * wall;
            bed.push(z as f32);
            ice.push(if row >= WALL_ROWS + 2 { 30.0 } else { 0.0 });
        }
    }
    (
        Grid::from_values(geometry, bed),
        Grid::from_values(geometry, ice),
    )
}

fn run(redistribute: bool) -> IceSimulation {
    let (bed, ice) = cirque();
    let mut scenario = Scenario {
        n_years: 20,
        relaxation_years: 0,
        ..Scenario::default()
    };
    scenario.climate.warming_c_per_decade = 0.0;
    scenario.climate.solar_cycle_amplitude_k = 0.0;
    // Far below the cirque: snow everywhere at the cap, no melt.
    scenario.mass_balance.ela_m = Some(500.0);
    scenario.mass_balance.snow_redistribution = redistribute;
    scenario.flow.rate_factor_pa3_s = 1e-27;
    scenario.flow.ice_cell_size_m = DX;
    let mut simulation = IceSimulation::new(&bed, &ice, &scenario).expect("valid");
    while simulation.step_year().is_some() {}
    simulation
}

#[test]
fn a_steep_headwall_holds_no_accumulated_ice_and_mass_is_kept() {
    let with = run(true);
    let without = run(false);
    // Interior wall cells, two rows from the top edge (whose one-sided slope is gentler, so
    // it keeps snow that the nearly stiff ice creeps a few micrometres down from) and off the
    // foot (where Horn's stencil sees the floor): steeper than the 50 degree limit.
    let wall_ice = |s: &IceSimulation| {
        (2..WALL_ROWS - 1)
            .flat_map(|row| (1..N - 1).map(move |col| row * N + col))
            .map(|idx| f64::from(s.ice_thickness_m()[idx]))
            .fold(0.0, f64::max)
    };
    assert!(
        wall_ice(&with) < 1e-6,
        "{} m of ice on the headwall",
        wall_ice(&with)
    );
    // 20 years at the cap of 2 m w.e. = 2.198 m of ice a year (density 910).
    assert!(wall_ice(&without) > 40.0, "{} m", wall_ice(&without));
    let gained = |s: &IceSimulation| {
        s.summary().last().unwrap().ice_volume_km3 - s.summary()[0].ice_volume_km3
    };
    let (a, b) = (gained(&with), gained(&without));
    assert!(a > 0.0);
    assert!(((a - b) / b).abs() < 1e-9, "{a} km3 against {b} km3");
}
