//! Volume response time after a step change in ELA against Jóhannesson, Raymond &
//! Waddington (1989), "Time-scale for adjustment of glaciers to changes in mass balance",
//! J. Glaciol. 35(121):355-369 (volume and pages from memory): tau_V = H / (-b_t), with H a
//! thickness scale (the maximum thickness) and b_t the balance at the terminus.
//!
//! Tolerance: the e-folding time of the modelled volume must lie within a factor 1.5 of
//! tau_V either way (SCIENCE-CHECKS section 6 suggests +-50 %). The surface-elevation feedback
//! lengthens the response (Harrison, Elsberg, Echelmeyer & Krimmel 2001, J. Glaciol.), so the
//! model is expected on the long side of tau_V.

use forefield_engine::ice::flow::{FlowParams, SiaStepper};
use forefield_engine::ice::mass_balance::LinearBalance;

const N_COLS: usize = 15;
const N_ROWS: usize = 70;
const CELL_M: f64 = 200.0;

/// An invented straight valley: 12 % down-valley slope, parabolic cross-section.
fn valley_bed() -> Vec<f64> {
    (0..N_COLS * N_ROWS)
        .map(|i| {
            let (row, col) = (i / N_COLS, i % N_COLS);
            let across = (col as f64 - (N_COLS / 2) as f64) * CELL_M;
            3400.0 - 0.12 * row as f64 * CELL_M + 2e-4 * across * across
        })
        .collect()
}

fn profile(ela_m: f64) -> LinearBalance {
    // 0.7 m w.e. per 100 m in ice (x 1000/910) and a 2 m/a cap: the scenario defaults.
    let gradient = 0.007 * 1000.0 / 910.0;
    LinearBalance {
        ela_m,
        gradient_below_per_a: gradient,
        gradient_above_per_a: gradient,
        max_accumulation_m_per_a: 2.0 * 1000.0 / 910.0,
    }
}

#[test]
fn volume_e_folding_time_matches_johannesson_time_scale() {
    let bed = valley_bed();
    let mut stepper = SiaStepper::new(
        N_COLS,
        N_ROWS,
        CELL_M,
        bed.clone(),
        &[true; N_COLS * N_ROWS],
        FlowParams::default().constants(),
    )
    .expect("grid");
    let mut thickness = vec![0.0; N_COLS * N_ROWS];
    let initial = profile(2900.0);
    // Spin-up to a steady state from bare ground.
    let mut volume_before = 0.0;
    for year in 0..2000 {
        stepper.advance(&mut thickness, 1.0, &initial);
        if year == 1899 {
            volume_before = stepper.volume_m3(&thickness);
        }
    }
    let v0 = stepper.volume_m3(&thickness);
    assert!(
        ((v0 - volume_before) / v0).abs() < 1e-3,
        "not steady after spin-up"
    );

    // Time scale of the initial steady state.
    let h_max = thickness.iter().cloned().fold(0.0, f64::max);
    let centre_col = N_COLS / 2;
    let terminus_row = (0..N_ROWS)
        .rev()
        .find(|&row| thickness[row * N_COLS + centre_col] >= 1.0)
        .expect("a glacier");
    let terminus = terminus_row * N_COLS + centre_col;
    let b_terminus = initial.rate_m_per_a(bed[terminus] + thickness[terminus]);
    let tau_johannesson = h_max / -b_terminus;

    // Step the ELA up by 50 m (about +0.4 K at 120 m/K) and follow the volume.
    let raised = profile(2950.0);
    let mut volumes = vec![v0];
    for _ in 0..2000 {
        stepper.advance(&mut thickness, 1.0, &raised);
        volumes.push(stepper.volume_m3(&thickness));
    }
    let v_end = *volumes.last().expect("volumes");
    let tail = volumes[volumes.len() - 101];
    assert!(
        ((v_end - tail) / v_end).abs() < 1e-3,
        "not steady after the step"
    );
    assert!(v_end < v0, "raising the ELA must shrink the glacier");
    let fraction = |v: f64| (v - v_end) / (v0 - v_end);
    let crossing = volumes
        .windows(2)
        .position(|w| fraction(w[1]) <= (-1.0f64).exp())
        .expect("decay");
    let (f_a, f_b) = (fraction(volumes[crossing]), fraction(volumes[crossing + 1]));
    let tau_model = crossing as f64 + (f_a - (-1.0f64).exp()) / (f_a - f_b);
    let ratio = tau_model / tau_johannesson;
    eprintln!(
        "H_max {h_max:.1} m, b_t {b_terminus:.2} m/a, tau_J {tau_johannesson:.1} a, \
         model e-folding {tau_model:.1} a, ratio {ratio:.2}; V0 {:.4} km3 -> {:.4} km3",
        v0 / 1e9,
        v_end / 1e9
    );
    assert!((1.0 / 1.5..=1.5).contains(&ratio), "ratio {ratio}");
}
