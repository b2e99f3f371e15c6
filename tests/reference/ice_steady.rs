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

use forefield_engine::ice::flow::{FlowConstants, SiaStepper};
use forefield_engine::ice::mass_balance::LinearBalance;

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

/// Jarosch, Schoof & Anslow (2013), The Cryosphere 7:229-240, section 6 and 7.1: a 1-D glacier
/// with its divide at x = 0 over a bed of b0 = 500 m for x < xs = 7 km and 0 beyond; balance
/// (their eq. 54) m(x) = (n m0 / xm^(2n-1)) x^(n-1) (xm - x)^(n-1) (xm - 2x), m0 = 2 m/a,
/// xm = 20 km; A, rho, g, n as above. Its flux q(x) = m0 (x (xm - x))^n / xm^(2n-1) gives, as
/// for Test A, h^((2n+2)/n) = C (xm + 2x)(xm - x)^2 beyond the step (eq. 56, with
/// C = (2n+2)/(6n) (m0/Gamma)^(1/n) xm^(-(2n-1)/n)), and above it
/// h^((2n+2)/n) = h-^((2n+2)/n) - h+^((2n+2)/n) + C (xm + 2x)(xm - x)^2 with
/// h- = max(h+ - b0, 0) (eqs. 57-59). Here h+ = 371.88 m < b0, so h- = 0: the ice
/// thins to nothing at the lip and falls over the step; h(0) = 261.82 m, V = 4.5070e6 m^2.
/// Set-up checked against the authors' published script for their Fig. 3.
fn step_exact_m(gamma: f64, x: f64) -> f64 {
    let c = 8.0 / 18.0 * (STEP_M0 / gamma).powf(1.0 / 3.0) * STEP_XM.powf(-5.0 / 3.0);
    let f = |x: f64| (STEP_XM + 2.0 * x) * (STEP_XM - x).powi(2);
    let p = 8.0 / 3.0;
    let h_plus = (c * f(STEP_XS)).powf(1.0 / p);
    let h_minus = (h_plus - STEP_B0).max(0.0);
    if x < STEP_XS {
        (h_minus.powf(p) - h_plus.powf(p) + c * f(x)).powf(1.0 / p)
    } else if x < STEP_XM {
        (c * f(x)).powf(1.0 / p)
    } else {
        0.0
    }
}

const STEP_M0: f64 = 2.0;
const STEP_XM: f64 = 20e3;
const STEP_XS: f64 = 7e3;
const STEP_B0: f64 = 500.0;

/// Runs the step glacier from a bare bed for `years` as the middle row of a three-row strip.
/// The outer rows are closed and copied from the middle row after every year: a closed cell
/// keeps its ice, and corners beyond the grid edge have zero diffusivity, so this mirror is
/// what makes the middle row's faces see a 1-D glacier. Cells span [i dx, (i+1) dx], so the
/// divide (no flux) is the west edge and the step is a cell face; each cell gets the exact
/// mean of m over it, (q(x_{i+1}) - q(x_i)) / dx. Returns the middle row.
fn run_step(dx_m: f64, years: usize) -> Vec<f64> {
    let n_cols = (30e3 / dx_m) as usize;
    let n = 3 * n_cols;
    let x_centre = |col: usize| (col as f64 + 0.5) * dx_m;
    let flux = |x: f64| STEP_M0 * (x * (STEP_XM - x)).max(0.0).powi(3) / STEP_XM.powi(5);
    let bed: Vec<f64> = (0..n)
        .map(|i| {
            if x_centre(i % n_cols) < STEP_XS {
                STEP_B0
            } else {
                0.0
            }
        })
        .collect();
    let open: Vec<bool> = (0..n).map(|i| i / n_cols == 1).collect();
    let accumulation: Vec<f64> = (0..n)
        .map(|i| {
            let col = (i % n_cols) as f64;
            if i / n_cols == 1 {
                (flux((col + 1.0) * dx_m) - flux(col * dx_m)) / dx_m
            } else {
                0.0
            }
        })
        .collect();
    let mut stepper = SiaStepper::new(n_cols, 3, dx_m, bed, &open, constants()).expect("grid");
    let mut h = vec![0.0; n];
    for _ in 0..years {
        let report = stepper.advance_with(&mut h, 1.0, &LinearBalance::ZERO, Some(&accumulation));
        assert!(report.max_step_over_limit <= 1.0);
        let (north, rest) = h.split_at_mut(n_cols);
        let (middle, south) = rest.split_at_mut(n_cols);
        north.copy_from_slice(middle);
        south.copy_from_slice(middle);
    }
    assert!(h.iter().all(|&x| x >= 0.0), "negative thickness");
    h[n_cols..2 * n_cols].to_vec()
}

/// Measured after 100 ka from a bare bed (the margin still creeps, ~1e-4 of the volume per
/// ka at 500 m): downstream of the step within 1.5 % of the exact profile from 8 to 16 km;
/// h(0) -2.9 % at 1 km and -1.4 % at 500 m; volume -4.4 % and -2.6 %, the lack sitting above
/// the step and at the margin. The scheme is the Mahaffy type the paper shows to be
/// inaccurate at the step, so these are bounds on this engine, not the paper's figures.
#[test]
fn jarosch_bedrock_step_at_1_km_and_500_m() {
    let gamma = constants().deformation_m3_a;
    assert!((step_exact_m(gamma, 0.0) - 261.82).abs() < 0.01);
    let v_exact: f64 = (0..20_000)
        .map(|i| step_exact_m(gamma, i as f64 + 0.5))
        .sum();
    assert!((v_exact / 4.5070e6 - 1.0).abs() < 1e-4, "V = {v_exact}");
    let mut divide_errs = Vec::new();
    for (dx, divide_tol, volume_tol) in [(1000.0, 0.035, 0.05), (500.0, 0.02, 0.03)] {
        let h = run_step(dx, 100_000);
        let x = |col: usize| (col as f64 + 0.5) * dx;
        for (col, &hc) in h.iter().enumerate() {
            if (8e3..=16e3).contains(&x(col)) {
                let exact = step_exact_m(gamma, x(col));
                assert!(
                    (hc / exact - 1.0).abs() < 0.015,
                    "dx {dx}: h({}) = {hc}, exact {exact}",
                    x(col)
                );
            }
        }
        let divide_err = h[0] / step_exact_m(gamma, x(0)) - 1.0;
        let volume_err = h.iter().sum::<f64>() * dx / v_exact - 1.0;
        eprintln!("dx {dx} m: h(0) {divide_err:+.4}, volume {volume_err:+.4}");
        assert!(
            divide_err.abs() < divide_tol,
            "dx {dx}: divide {divide_err}"
        );
        assert!(
            volume_err.abs() < volume_tol,
            "dx {dx}: volume {volume_err}"
        );
        divide_errs.push(divide_err.abs());
    }
    assert!(divide_errs[0] / divide_errs[1] >= 1.8, "{divide_errs:?}");
}
