//! Thickness from a glacier outline by perfect plasticity, H = tau_b / (f rho g sin alpha)
//! (Nye 1952, Nature 169:529-530), against the worked values of SCIENCE-CHECKS section 7 [C],
//! and the volume against volume-area scaling V = 0.034 A^1.375 (km, Bahr, Meier & Peckham
//! 1997, JGR 102(B9):20355-20362; c from memory). Bahr, Pfeffer & Kaser (2015, Rev. Geophys.
//! 53:95-140) stress that scaling holds for ensembles; single glaciers scatter around it by
//! about a factor of two (from memory), which sets the per-glacier tolerance; the ensemble
//! must agree within a factor of two (section 7 test).

use forefield_engine::base::grid::{Grid, GridGeometry};
use forefield_engine::ice::outline_thickness::{
    scaling_volume_m3, thickness_from_outline, PlasticityParams,
};
use forefield_engine::sample;

fn params(tau_pa: f64, shape_factor: f64) -> PlasticityParams {
    PlasticityParams {
        basal_shear_stress_pa: tau_pa,
        shape_factor,
        ..PlasticityParams::default()
    }
}

#[test]
fn worked_examples_of_the_plasticity_formula() {
    // tau 100 kPa, 5 degrees, rho 900 -> 130.0 m; rho 917 -> 127.5 m; 10 degrees -> 65.2 m;
    // tau 150 kPa, 3 degrees -> 324.6 m (section 7 [C], g = 9.81).
    let check = |tau: f64, deg: f64, rho: f64, expected: f64| {
        let h = params(tau, 1.0).thickness_for_slope_m(f64::to_radians(deg), rho);
        assert!(
            (h - expected).abs() < 0.05,
            "{tau} Pa, {deg} deg, {rho} kg/m3: {h} m"
        );
    };
    check(100e3, 5.0, 900.0, 130.0);
    check(100e3, 5.0, 917.0, 127.5);
    check(100e3, 10.0, 900.0, 65.2);
    check(150e3, 3.0, 900.0, 324.6);
    // The slope floor keeps flat ice finite: 2 degrees by default.
    let flat = params(100e3, 1.0).thickness_for_slope_m(0.0, 900.0);
    assert!((flat - 100e3 / (900.0 * 9.81 * 2f64.to_radians().sin())).abs() < 1e-9);
}

/// Volume-area scaling examples of section 7 [C]: 1, 10, 100 km2 -> 0.034, 0.806, 19.1 km3.
#[test]
fn volume_area_scaling_examples() {
    for (area_km2, volume_km3) in [(1.0, 0.034), (10.0, 0.806), (100.0, 19.1)] {
        let v = scaling_volume_m3(area_km2 * 1e6) / 1e9;
        assert!(
            (v / volume_km3 - 1.0).abs() < 0.003,
            "{area_km2} km2: {v} km3"
        );
    }
}

/// On a plane tilted at 5 degrees the smoothed slope is the plane's, so the estimate is the
/// worked value 130.0 m x (1 / f) wherever Nye's margin profile does not cap it.
#[test]
fn plane_surface_gives_the_worked_thickness() {
    let n = 60;
    let geometry = GridGeometry {
        n_cols: n,
        n_rows: n,
        cell_size_m: 25.0,
        west_m: 0.0,
        north_m: 0.0,
        epsg: Some(32626),
    };
    let tan = 5f64.to_radians().tan();
    let surface = Grid::from_values(
        geometry,
        (0..n * n)
            .map(|i| (3000.0 - tan * 25.0 * (i / n) as f64) as f32)
            .collect(),
    );
    let mask: Vec<bool> = (0..n * n)
        .map(|i| (i / n).abs_diff(30) < 10 && (i % n).abs_diff(30) < 10)
        .collect();
    let estimate =
        thickness_from_outline(&surface, &mask, &params(100e3, 0.8), 900.0).expect("valid");
    // Inside, the slope rule caps at Nye's (1952) margin profile sqrt(2 tau x / (rho g)),
    // x the distance to the outline, half a cell short of the nearest outside centre
    // (found here by brute force).
    let slope_rule: f64 = 130.0 / 0.8;
    for (idx, &inside) in mask.iter().enumerate() {
        let h = f64::from(estimate.ice_thickness_m.values[idx]);
        if inside {
            let (r, c) = ((idx / n) as f64, (idx % n) as f64);
            let nearest = (0..n * n)
                .filter(|&j| !mask[j])
                .map(|j| ((r - (j / n) as f64).powi(2) + (c - (j % n) as f64).powi(2)).sqrt())
                .fold(f64::INFINITY, f64::min);
            let x_m = (nearest - 0.5) * 25.0;
            let nye = (2.0 * 100e3 * x_m / (900.0 * 9.81)).sqrt();
            let expected = slope_rule.min(nye);
            assert!((h / expected - 1.0).abs() < 2e-3, "cell {idx}: {h} m");
        } else {
            assert_eq!(h, 0.0);
        }
    }
    assert!((estimate.area_m2 - 19.0 * 19.0 * 625.0).abs() < 1e-6);
}

/// The invented sample valley at three sizes (its shapes scale with the grid) makes an
/// ensemble of three glaciers: each estimate within a factor 2.5 of scaling, the ensemble
/// within a factor 2.
#[test]
fn sample_glaciers_against_volume_area_scaling() {
    let (mut sum_plastic, mut sum_scaling) = (0.0, 0.0);
    for n in [160, 300, 500] {
        let valley = sample::generate(n);
        let mask: Vec<bool> = valley
            .ice_thickness_m
            .values
            .iter()
            .map(|&h| h > 1.0)
            .collect();
        let estimate = thickness_from_outline(
            &valley.surface_m,
            &mask,
            &PlasticityParams::default(),
            910.0,
        )
        .expect("valid");
        let ratio = estimate.volume_m3 / estimate.scaling_volume_m3;
        eprintln!(
            "sample {n}: area {:.2} km2, plasticity {:.4} km3, scaling {:.4} km3, ratio {ratio:.2}",
            estimate.area_m2 / 1e6,
            estimate.volume_m3 / 1e9,
            estimate.scaling_volume_m3 / 1e9
        );
        assert!(
            (1.0 / 2.5..=2.5).contains(&ratio),
            "sample {n}: ratio {ratio}"
        );
        sum_plastic += estimate.volume_m3;
        sum_scaling += estimate.scaling_volume_m3;
    }
    let ratio = sum_plastic / sum_scaling;
    assert!((0.5..=2.0).contains(&ratio), "ensemble ratio {ratio}");
}
