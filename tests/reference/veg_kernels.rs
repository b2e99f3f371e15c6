//! Dispersal kernels against their closed forms (Clark, Silman, Kern, Macklin &
//! HilleRisLambers 1999, "Seed dispersal near and far", Ecology 80(5):1475-1494, for 2Dt; the
//! exponential and Gaussian forms are the standard ones), the worked tail fractions of
//! SCIENCE-CHECKS section 8, and the fast convolution against a direct one.

use forefield_engine::plants::dispersal::{Boundary, DispersalOperator};
use forefield_engine::plants::kernels::{direct_convolution, direct_taps, Kernel, KernelFamily};

const FAMILIES: [KernelFamily; 3] = [
    KernelFamily::NegativeExponential,
    KernelFamily::Gaussian,
    KernelFamily::TwoDt,
];

/// Integral of g over [0, upper] by the composite Simpson rule in r = u^2 (dense near 0).
fn integrate(g: impl Fn(f64) -> f64, upper: f64) -> f64 {
    let n = 200_000;
    let top = upper.sqrt();
    let h = top / n as f64;
    let f = |u: f64| g(u * u) * 2.0 * u;
    let mut sum = f(0.0) + f(top);
    for i in 1..n {
        sum += f(i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 };
    }
    sum * h / 3.0
}

#[test]
fn kernels_integrate_to_one_and_have_the_closed_form_mean() {
    use std::f64::consts::PI;
    for family in FAMILIES {
        for p in [1.0, 2.0] {
            let k = Kernel::from_mean(family, 50.0, p).expect("valid");
            // Truncate where the remaining mass is below 1e-7 (tails from the closed forms).
            let mut upper = 100.0;
            while k.tail_probability(upper) > 1e-7 {
                upper *= 2.0;
            }
            let mass = integrate(|r| 2.0 * PI * r * k.density_per_m2(r), upper);
            assert!((mass - 1.0).abs() < 2e-6, "{family:?} p={p}: mass {mass}");
            // Mean distance = int_0^inf P(R > r) dr, from the density via the tail; the
            // remainder beyond `upper` is below 1e-7 * upper... added in closed form for 2Dt.
            let mean = integrate(|r| 2.0 * PI * r * r * k.density_per_m2(r), upper)
                + upper * k.tail_probability(upper)
                + integrate_tail(&k, upper);
            assert!(
                (mean / k.mean_distance_m() - 1.0).abs() < 1e-4,
                "{family:?} p={p}: mean {mean} vs {}",
                k.mean_distance_m()
            );
            assert!((k.mean_distance_m() - 50.0).abs() < 1e-9);
        }
    }
}

/// int_upper^inf P(R > r) dr: zero for the thin tails; for 2Dt, substitute r = upper / t.
fn integrate_tail(k: &Kernel, upper: f64) -> f64 {
    if k.family != KernelFamily::TwoDt {
        return 0.0;
    }
    let n = 100_000;
    let h = 1.0 / n as f64;
    (0..n)
        .map(|i| {
            let t = (i as f64 + 0.5) * h;
            k.tail_probability(upper / t) * upper / (t * t) * h
        })
        .sum()
}

#[test]
fn tail_fractions_match_the_worked_values() {
    // SCIENCE-CHECKS section 8, mean 50 m: a = 25 m, sigma = 39.894 m, 2Dt p = 1 with
    // u = (100/pi)^2 = 1013.21 m^2.
    let e = Kernel::from_mean(KernelFamily::NegativeExponential, 50.0, 1.0).expect("valid");
    let g = Kernel::from_mean(KernelFamily::Gaussian, 50.0, 1.0).expect("valid");
    let t = Kernel::from_mean(KernelFamily::TwoDt, 50.0, 1.0).expect("valid");
    assert!((e.scale_m() - 25.0).abs() < 1e-9);
    assert!((g.scale_m() - 39.894).abs() < 1e-3);
    assert!((t.scale_m().powi(2) - 1013.21).abs() < 1e-2);
    let within = |got: f64, want: f64, tol: f64| (got / want - 1.0).abs() < tol;
    assert!(within(e.tail_probability(100.0), 0.0916, 0.005));
    assert!(within(
        g.tail_probability(100.0),
        (-std::f64::consts::PI).exp(),
        1e-4
    ));
    assert!(within(g.tail_probability(100.0), 0.0432, 0.005));
    assert!(within(t.tail_probability(100.0), 0.0920, 0.005));
    assert!(within(e.tail_probability(500.0), 4.3e-8, 0.02));
    assert!(g.tail_probability(500.0) < 1e-33 && g.tail_probability(500.0) > 1e-35);
    assert!(within(t.tail_probability(500.0), 4.0e-3, 0.02));
    // The tail is also what the density integrates to beyond d.
    for k in [e, g, t] {
        let inner = integrate(
            |r| 2.0 * std::f64::consts::PI * r * k.density_per_m2(r),
            100.0,
        );
        assert!((1.0 - inner - k.tail_probability(100.0)).abs() < 1e-6);
    }
}

#[test]
fn gaussian_mixture_reproduces_the_closed_form_density() {
    use std::f64::consts::PI;
    for family in [KernelFamily::NegativeExponential, KernelFamily::TwoDt] {
        for p in [1.0, 1.5, 3.0] {
            let k = Kernel::from_mean(family, 50.0, p).expect("valid");
            let mixture = k.gaussian_mixture();
            let mut r = 0.5;
            // Out to where 99.9 % of seed has landed.
            while k.tail_probability(r) > 1e-3 {
                let sum: f64 = mixture
                    .iter()
                    .map(|&(w, s)| w * (-r * r / (2.0 * s * s)).exp() / (2.0 * PI * s * s))
                    .sum();
                let exact = k.density_per_m2(r);
                assert!(
                    (sum / exact - 1.0).abs() < 2e-3,
                    "{family:?} p={p} r={r}: {sum} vs {exact}"
                );
                r *= 1.2;
            }
        }
    }
}

#[test]
fn discretised_kernel_sums_to_one_and_keeps_the_mean_on_the_grid() {
    // Cell = mean / 10 (SCIENCE-CHECKS section 8 asks for the mean within 1 % there).
    let cell = 5.0;
    let radius = 100;
    for family in FAMILIES {
        let k = Kernel::from_mean(family, 50.0, 1.0).expect("valid");
        let taps = direct_taps(&k, cell, radius);
        let width = 2 * radius + 1;
        let half = (radius as f64 + 0.5) * cell;
        let total: f64 = taps.iter().map(|&t| f64::from(t)).sum();
        // The square holds the disc of radius `half` and lies inside the one of half * sqrt 2.
        let low = 1.0 - k.tail_probability(half);
        let high = 1.0 - k.tail_probability(half * std::f64::consts::SQRT_2);
        assert!(
            total > low - 1e-5 && total < high + 1e-5,
            "{family:?}: {total} not in [{low}, {high}]"
        );
        // Mean over cells whose centre lies within L, plus the closed-form remainder.
        let l = radius as f64 * cell;
        let mut inner_mean = 0.0;
        for (i, &t) in taps.iter().enumerate() {
            let (dr, dc) = (
                (i / width) as f64 - radius as f64,
                (i % width) as f64 - radius as f64,
            );
            let r = (dr * dr + dc * dc).sqrt() * cell;
            if r <= l {
                inner_mean += r * f64::from(t);
            }
        }
        let remainder = l * k.tail_probability(l) + integrate_tail(&k, l);
        let mean = inner_mean + remainder;
        assert!(
            (mean / 50.0 - 1.0).abs() < 0.01,
            "{family:?}: grid mean {mean} m"
        );
    }
}

/// Production: a block of seed source and a few scattered trees.
fn test_production(n: usize) -> Vec<f32> {
    let mut production = vec![0.0f32; n * n];
    for row in n / 3..n / 3 + 8 {
        for col in n / 4..n / 4 + 12 {
            production[row * n + col] = 100.0;
        }
    }
    for (i, &(row, col)) in [(10, 90), (60, 60), (100, 20), (85, 105)]
        .iter()
        .enumerate()
    {
        production[row * n + col] = 50.0 * (i + 1) as f32;
    }
    production
}

fn relative_l1(fast: &[f32], direct: &[f32]) -> f64 {
    let diff: f64 = fast
        .iter()
        .zip(direct)
        .map(|(&a, &b)| f64::from((a - b).abs()))
        .sum();
    diff / direct.iter().map(|&b| f64::from(b)).sum::<f64>()
}

#[test]
fn fast_convolution_matches_direct_convolution() {
    // The direct convolution reaches every cell (radius = grid size), so both see the same
    // kernel. Stated error (relative L1): 0.5 % at full resolution and when the filters
    // start on 2 x 2 blocks. Measured: 0.31 % / 0.23 % / 0.39 % (exponential / Gaussian /
    // 2Dt) at full resolution, 0.33 % / 0.23 % / 0.41 % on blocks; with every component at
    // full resolution it is 3e-5.
    let n = 120;
    let cell = 5.0;
    let production = test_production(n);
    for family in FAMILIES {
        let k = Kernel::from_mean(family, 50.0, 1.0).expect("valid");
        let mut direct = vec![0.0; n * n];
        direct_convolution(&k, cell, n, n, n - 1, &production, &mut direct);
        for (base_factor, tolerance) in [(1, 0.005), (2, 0.005)] {
            let op = DispersalOperator::new(&k, cell, n, n, base_factor, Boundary::Absorbing);
            let mut scratch = op.scratch();
            let mut fast = vec![0.0; n * n];
            op.apply(&production, &mut fast, &mut scratch);
            let error = relative_l1(&fast, &direct);
            assert!(
                error < tolerance,
                "{family:?} base {base_factor}: relative L1 error {error}"
            );
        }
    }
}

/// Seed carried to cells whose centres lie beyond `distances_m` from a point source at a
/// cell centre, through the operator as the plant model builds it (50 m filters on 25 m
/// cells, a 1024 x 1024 grid).
fn operator_tails(kernel: &Kernel, distances_m: &[f64]) -> Vec<f64> {
    let op = DispersalOperator::new(kernel, TAIL_CELL_M, TAIL_N, TAIL_N, 2, Boundary::Absorbing);
    let mut scratch = op.scratch();
    let mut source = vec![0.0f32; TAIL_N * TAIL_N];
    source[TAIL_CENTRE * TAIL_N + TAIL_CENTRE] = 1.0;
    let mut rain = vec![0.0f32; TAIL_N * TAIL_N];
    op.apply(&source, &mut rain, &mut scratch);
    distances_m
        .iter()
        .map(|&d| {
            rain.iter()
                .enumerate()
                .filter(|&(i, _)| beyond(i / TAIL_N, i % TAIL_N, d))
                .map(|(_, &r)| f64::from(r))
                .sum()
        })
        .collect()
}

const TAIL_N: usize = 1024;
const TAIL_CELL_M: f64 = 25.0;
const TAIL_CENTRE: usize = TAIL_N / 2;

fn beyond(row: usize, col: usize, d_m: f64) -> bool {
    let (dr, dc) = (
        row as f64 - TAIL_CENTRE as f64,
        col as f64 - TAIL_CENTRE as f64,
    );
    dr.hypot(dc) * TAIL_CELL_M > d_m
}

/// The same cells' share of the exact density, by 8 x 8 midpoint quadrature per cell. With
/// `window_m`, summed over the cells out to it (for a thin tail: the quadrature's error at the
/// source's cusp stays out); without, one less the mass of the cells within d (for a fat
/// tail that a window would cut).
fn exact_cell_tail(density_per_m2: &dyn Fn(f64) -> f64, d_m: f64, window_m: Option<f64>) -> f64 {
    let reach = (window_m.unwrap_or(d_m) / TAIL_CELL_M).ceil() as usize + 1;
    let sub = 8;
    let mut mass = 0.0;
    for row in TAIL_CENTRE - reach..=TAIL_CENTRE + reach {
        for col in TAIL_CENTRE - reach..=TAIL_CENTRE + reach {
            if beyond(row, col, d_m) != window_m.is_some() {
                continue;
            }
            for i in 0..sub {
                for j in 0..sub {
                    let offset = |k: usize, centre: usize, at: usize| {
                        (at as f64 - centre as f64 + (k as f64 + 0.5) / sub as f64 - 0.5)
                            * TAIL_CELL_M
                    };
                    let (y, x) = (offset(i, TAIL_CENTRE, row), offset(j, TAIL_CENTRE, col));
                    mass += density_per_m2(x.hypot(y));
                }
            }
        }
    }
    mass *= (TAIL_CELL_M / sub as f64).powi(2);
    if window_m.is_some() {
        mass
    } else {
        1.0 - mass
    }
}

/// A kernel, its exact density, the quadrature window and (distance, P(R > d)) pairs.
type TailCase<'a> = (Kernel, &'a dyn Fn(f64) -> f64, Option<f64>, Vec<(f64, f64)>);

/// The fast operator's tails as the model uses it, against the closed forms P(R > d) of
/// Clark et al. (1999): 2Dt (1 + d^2/u)^-p with mean sqrt(u) pi/2 at p = 1, exponential
/// (1 + d/a) exp(-d/a) with mean 2a. Each ring sum is within 5 % of the exact density
/// integrated over the same cells (the operator's own error) and, where the ring spans at
/// least 10 cells, of the closed form (at 100 m, four cells, the exponential's a = 25 m is one
/// cell and the choice of cells alone moves the tail 8 %). Measured: 2Dt -0.1, -0.5, -1.5 %
/// against the closed form; exponential -2.5 % at 100 m and -3.5 % at 250 m against the cells.
#[test]
fn operator_tails_match_the_closed_forms() {
    let sqrt_u = 100.0 / std::f64::consts::FRAC_PI_2;
    let two_dt = |r: f64| {
        1.0 / (std::f64::consts::PI * sqrt_u * sqrt_u) * (1.0 + (r / sqrt_u).powi(2)).powi(-2)
    };
    let a = 25.0;
    let exponential = |r: f64| (-r / a).exp() / (std::f64::consts::TAU * a * a);
    let cases: [TailCase; 2] = [
        (
            Kernel::from_mean(KernelFamily::TwoDt, 100.0, 1.0).expect("valid"),
            &two_dt,
            None,
            vec![(500.0, 0.01595), (1000.0, 0.00404), (2000.0, 0.00101)],
        ),
        (
            Kernel::from_mean(KernelFamily::NegativeExponential, 50.0, 1.0).expect("valid"),
            &exponential,
            Some(1500.0),
            vec![(100.0, 0.0916), (250.0, 4.99e-4)],
        ),
    ];
    for (kernel, density, window_m, expected) in cases {
        let distances: Vec<f64> = expected.iter().map(|&(d, _)| d).collect();
        let tails = operator_tails(&kernel, &distances);
        for (&(d, p), &got) in expected.iter().zip(&tails) {
            let cells = exact_cell_tail(density, d, window_m);
            assert!(
                (got / cells - 1.0).abs() <= 0.05,
                "{:?} beyond {d} m: {got} against {cells} over the same cells",
                kernel.family
            );
            if d / TAIL_CELL_M >= 10.0 {
                assert!(
                    (got / p - 1.0).abs() <= 0.05,
                    "{:?} beyond {d} m: {got} against {p}",
                    kernel.family
                );
            }
        }
    }
}
