//! Steady shallow-ice dome against the exact solution of Bueler, Lingle, Kallen-Brown, Covey
//! & Bowman (2005), J. Glaciol. 51(173):291-306, Test A: flat bed, no sliding, constant
//! accumulation M0 for r < L and no ice beyond L. Parameters as in that paper (from memory):
//! M0 = 0.3 m/a, L = 750 km, A = 1e-16 Pa^-3 a^-1, rho = 910 kg/m3, g = 9.81 m/s2, n = 3.
//!
//! Steady state: the ice crossing radius r carries what falls inside it, 2 pi r q = pi r^2 M0,
//! so q = M0 r / 2 = Gamma H^(n+2) |H'|^n with Gamma = 2A(rho g)^n/(n+2). Taking the n-th root,
//! -H^((n+2)/n) H' = (M0/(2 Gamma))^(1/n) r^(1/n); integrating from r to L, where H = 0,
//! H^((2n+2)/n) = 2 (M0/(2 Gamma))^(1/n) (L^((n+1)/n) - r^((n+1)/n)), so
//! H(r) = H0 (1 - (r/L)^((n+1)/n))^(n/(2n+2)), H0 = (2^(n-1) M0/Gamma)^(1/(2n+2)) L^(1/2)
//! (Bueler et al. 2005, Test A), here H0 = (4 M0/Gamma)^(1/8) L^(1/2) = 3278.34 m.
//! Volume: V = 2 pi H0 L^2 int_0^1 (1 - s^(4/3))^(3/8) s ds = 2 pi H0 L^2 (3/4) B(3/2, 11/8);
//! the Beta factor, 0.330 497 708, is evaluated from Gamma-function values and checked here
//! by quadrature. V = 3.829 35e15 m^3.
//!
//! The stepper builds the dome from a bare bed, with the accumulation per cell: M0 where the
//! cell centre lies inside L, and beyond L a rate that removes all ice arriving there within
//! the substep (the margin fixed at L, as Test A prescribes). Measured after 30 ka, with a
//! node at the dome centre:
//!   dx = 50 km:   H(0) +0.98 %, V +3.35 %
//!   dx = 25 km:   H(0) +0.44 %, V +1.70 %
//!   dx = 12.5 km: H(0) +0.21 %, V +0.90 %
//! Both errors fall about twofold as dx halves (first order, set by the margin cells). Over
//! the last 5 ka the volume changes by under 2e-6 of itself.

use forefield_engine::ice_flow::{FlowConstants, SiaStepper};
use forefield_engine::mass_balance::LinearBalance;

const M0_M_A: f64 = 0.3;
const L_M: f64 = 750e3;
/// (3/4) B(3/2, 11/8) = (3/4) Gamma(3/2) Gamma(11/8) / Gamma(23/8).
const VOLUME_FACTOR: f64 = 0.330_497_707_937_272_3;

fn constants() -> FlowConstants {
    FlowConstants::new(1e-16, 910.0, 9.81, 0.0, 0.8)
}

fn dome_height_m(gamma: f64) -> f64 {
    (4.0 * M0_M_A / gamma).powf(1.0 / 8.0) * L_M.sqrt()
}

fn exact_thickness_m(gamma: f64, r_m: f64) -> f64 {
    if r_m >= L_M {
        return 0.0;
    }
    dome_height_m(gamma) * (1.0 - (r_m / L_M).powf(4.0 / 3.0)).powf(3.0 / 8.0)
}

fn exact_volume_m3(gamma: f64) -> f64 {
    2.0 * std::f64::consts::PI * dome_height_m(gamma) * L_M * L_M * VOLUME_FACTOR
}

#[derive(Debug)]
struct SteadyDome {
    centre_rel_err: f64,
    volume_rel_err: f64,
    /// Relative volume change over the last 5 ka of the run.
    last_5ka_rel_change: f64,
    /// Net balance over the last 1 ka over the accumulation in that time.
    last_1ka_net_balance: f64,
    /// Largest thickness in a cell whose centre lies at or beyond L.
    beyond_margin_max_m: f64,
    max_step_over_limit: f64,
}

/// Builds the Test A dome from a bare bed over `duration_a` on a square grid of half-width
/// 900 km with a node at the centre.
fn spin_up(dx_m: f64, duration_a: f64) -> SteadyDome {
    let c = constants();
    let gamma = c.deformation_m3_a;
    let half_cells = (900e3 / dx_m).ceil() as usize;
    let n = 2 * half_cells + 1;
    let radius = |idx: usize| {
        let (row, col) = (idx / n, idx % n);
        let x = (col as f64 - half_cells as f64) * dx_m;
        let y = (row as f64 - half_cells as f64) * dx_m;
        x.hypot(y)
    };
    // Beyond L, -1e4 m/a: ice enters a margin cell at about q dt / dx <= 10 m/a times the
    // substep (q <= M0 L / 2), so the removal exceeds any arrival a thousandfold whatever dt.
    let accumulation: Vec<f64> = (0..n * n)
        .map(|i| if radius(i) < L_M { M0_M_A } else { -1e4 })
        .collect();
    let gaining_m2 = accumulation.iter().filter(|&&a| a > 0.0).count() as f64 * dx_m * dx_m;
    let mut thickness = vec![0.0; n * n];
    let mut stepper =
        SiaStepper::new(n, n, dx_m, vec![0.0; n * n], &vec![true; n * n], c).expect("valid grid");
    // Century calls, so the first substeps on bare ground add 30 m rather than a slab.
    let chunk_a = 100.0;
    let n_chunks = (duration_a / chunk_a).round() as usize;
    let (mut v_5ka_before, mut net_last_1ka, mut max_step_over_limit) = (0.0, 0.0, 0.0_f64);
    for k in 0..n_chunks {
        if k == n_chunks - 50 {
            v_5ka_before = stepper.volume_m3(&thickness);
        }
        let report = stepper.advance_with(
            &mut thickness,
            chunk_a,
            &LinearBalance::ZERO,
            Some(&accumulation),
        );
        max_step_over_limit = max_step_over_limit.max(report.max_step_over_limit);
        if k >= n_chunks - 10 {
            net_last_1ka += report.balance_volume_m3;
        }
    }
    assert!(thickness.iter().all(|&h| h >= 0.0), "negative thickness");
    let volume = stepper.volume_m3(&thickness);
    let centre = half_cells * n + half_cells;
    SteadyDome {
        centre_rel_err: thickness[centre] / dome_height_m(gamma) - 1.0,
        volume_rel_err: volume / exact_volume_m3(gamma) - 1.0,
        last_5ka_rel_change: (volume - v_5ka_before) / volume,
        last_1ka_net_balance: net_last_1ka / (M0_M_A * gaining_m2 * 10.0 * chunk_a),
        beyond_margin_max_m: (0..n * n)
            .filter(|&i| radius(i) >= L_M)
            .map(|i| thickness[i])
            .fold(0.0, f64::max),
        max_step_over_limit,
    }
}

/// The closed form itself: H0 and the volume factor against the flux balance they come from.
#[test]
fn test_a_exact_profile_carries_the_accumulation() {
    let gamma = constants().deformation_m3_a;
    // Gamma = 2.8457e-5 m^-3 a^-1 (SCIENCE-CHECKS section 2 [C]).
    assert!((gamma / 2.8457e-5 - 1.0).abs() < 1e-4);
    let h0 = dome_height_m(gamma);
    assert!((h0 - 3278.34).abs() < 0.01, "H0 = {h0} m");
    // q = Gamma H^5 |H'|^3 = M0 r / 2 at interior radii; H' by central difference.
    for frac in [0.1, 0.3, 0.5, 0.7, 0.9, 0.99] {
        let r = frac * L_M;
        let step = 1.0;
        let slope = (exact_thickness_m(gamma, r + step) - exact_thickness_m(gamma, r - step))
            / (2.0 * step);
        let flux = gamma * exact_thickness_m(gamma, r).powi(5) * slope.abs().powi(3);
        let balance = M0_M_A * r / 2.0;
        assert!(
            (flux / balance - 1.0).abs() < 1e-5,
            "r = {r} m: flux {flux}, balance {balance}"
        );
    }
    // Midpoint quadrature of int_0^1 (1 - s^(4/3))^(3/8) s ds; the end-point singularity of
    // the slope leaves its error near N^-1.375.
    let n = 400_000;
    let quad: f64 = (0..n)
        .map(|i| {
            let s = (i as f64 + 0.5) / n as f64;
            (1.0 - s.powf(4.0 / 3.0)).powf(3.0 / 8.0) * s
        })
        .sum::<f64>()
        / n as f64;
    assert!(
        (quad / VOLUME_FACTOR - 1.0).abs() < 1e-6,
        "quadrature {quad}"
    );
    let v = exact_volume_m3(gamma);
    assert!((v / 3.82935e15 - 1.0).abs() < 1e-5, "V = {v} m^3");
}

#[test]
fn test_a_steady_dome_from_a_bare_bed_converges_at_50_25_and_12_5_km() {
    let runs: Vec<(f64, SteadyDome)> = [50e3, 25e3, 12.5e3]
        .into_iter()
        .map(|dx| (dx, spin_up(dx, 30_000.0)))
        .collect();
    for (dx, dome) in &runs {
        eprintln!("dx = {dx} m: {dome:?}");
        assert!(dome.max_step_over_limit <= 1.0, "step above the limit");
        assert_eq!(dome.beyond_margin_max_m, 0.0, "ice beyond L at {dx} m");
        assert!(
            dome.last_5ka_rel_change.abs() < 1e-5,
            "not steady at {dx} m: {}",
            dome.last_5ka_rel_change
        );
        assert!(
            dome.last_1ka_net_balance.abs() < 1e-4,
            "accumulation and removal unbalanced at {dx} m: {}",
            dome.last_1ka_net_balance
        );
    }
    let fine = &runs[2].1;
    assert!(fine.centre_rel_err.abs() < 0.01, "12.5 km centre");
    assert!(fine.volume_rel_err.abs() < 0.01, "12.5 km volume");
    for pair in runs.windows(2) {
        let (coarse, finer) = (&pair[0].1, &pair[1].1);
        for (name, a, b) in [
            ("centre", coarse.centre_rel_err, finer.centre_rel_err),
            ("volume", coarse.volume_rel_err, finer.volume_rel_err),
        ] {
            assert!(
                a.abs() / b.abs() >= 1.8,
                "{name} error fell only {}x from {} m to {} m",
                a.abs() / b.abs(),
                pair[0].0,
                pair[1].0
            );
        }
    }
}
