//! Seed dispersal kernels: negative-exponential, Gaussian and 2Dt (Clark, Silman, Kern,
//! Macklin & HilleRisLambers 1999, "Seed dispersal near and far", Ecology 80(5):1475-1494),
//! their densities, tails and means, sampling of a distance for long-distance events, and each
//! written as a sum of Gaussians for the fast operator in `dispersal`.
//!
//! Fast convolution. Both wide kernels are scale mixtures of Gaussians: the 2Dt kernel is a
//! Gaussian whose inverse variance is gamma distributed (Clark et al. 1999), and the radial
//! negative exponential is a Gaussian whose variance is 2 a^2 s with s ~ Gamma(3/2, 1) (from
//! the Laplace-transform identity exp(-sqrt(b)) = int t^(-3/2) exp(-1/(4t)) exp(-b t) dt /
//! (2 sqrt(pi)), Abramowitz & Stegun 29.3.82). The mixing integral is taken by the trapezoid
//! rule in the logarithm of the gamma variable (steps [`QUADRATURE_STEP`] and
//! [`QUADRATURE_STEP_2DT`]), which converges geometrically for such smooth integrands
//! (Trefethen & Weideman 2014, SIAM Rev. 56:385).
//!
//! [`direct_convolution`] is the plain O(N R^2) sum the operator is checked against, for the
//! reference checks and the benchmark.

use rand::Rng;
use serde::{Deserialize, Serialize};

use crate::plants::error::{check_range, VegetationError};

/// Step of the trapezoid rule in ln(gamma variable). 0.5 keeps the summed Gaussians within
/// 0.2 % of the closed-form density out to the 99.9th percentile distance (reference checks).
pub const QUADRATURE_STEP: f64 = 0.5;

/// Step for the 2Dt kernel with shape p <= 1; it shrinks as 1/sqrt(p) above, with the width
/// of the Gamma(p) density in ln x. Its mixing density is smooth enough that this keeps the
/// 0.2 % of [`QUADRATURE_STEP`] with fewer components (reference checks, p = 1 to 3).
pub const QUADRATURE_STEP_2DT: f64 = 0.8;

/// Components whose mixing weight density falls below this fraction of its peak are dropped
/// and the rest renormalised; the mass lost this way is far below one part in 10^5.
pub const QUADRATURE_CUTOFF: f64 = 1e-7;

/// Kernel family.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum KernelFamily {
    /// f(r) = exp(-r/a) / (2 pi a^2); mean distance 2a.
    NegativeExponential,
    /// f(r) = exp(-r^2 / 2 sigma^2) / (2 pi sigma^2); mean distance sigma sqrt(pi/2).
    Gaussian,
    /// f(r) = p / (pi u) (1 + r^2/u)^-(p+1) (Clark et al. 1999); fat-tailed.
    #[serde(rename = "2dt")]
    TwoDt,
}

/// A 2-D radial dispersal kernel with its parameters in metres.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Kernel {
    pub family: KernelFamily,
    /// Exponential scale a (m), Gaussian sigma per axis (m), or 2Dt sqrt(u) (m).
    scale_m: f64,
    /// 2Dt shape p.
    shape_p: f64,
}

impl Kernel {
    /// The kernel of a family with a given mean dispersal distance (m); `shape_p` is the 2Dt
    /// shape and is ignored otherwise.
    pub fn from_mean(
        family: KernelFamily,
        mean_m: f64,
        shape_p: f64,
    ) -> Result<Kernel, VegetationError> {
        check_range("mean dispersal distance", mean_m, 1e-3, 1e6, "m")?;
        let scale_m = match family {
            KernelFamily::NegativeExponential => mean_m / 2.0,
            KernelFamily::Gaussian => mean_m / (std::f64::consts::PI / 2.0).sqrt(),
            KernelFamily::TwoDt => {
                check_range("2Dt shape p", shape_p, 0.51, 100.0, "")?;
                mean_m / two_dt_mean_factor(shape_p)
            }
        };
        Ok(Kernel {
            family,
            scale_m,
            shape_p,
        })
    }

    /// Exponential scale a, Gaussian sigma, or 2Dt sqrt(u), m.
    pub fn scale_m(&self) -> f64 {
        self.scale_m
    }

    /// Density per unit area at distance `r_m`, per m^2.
    pub fn density_per_m2(&self, r_m: f64) -> f64 {
        use std::f64::consts::PI;
        let s = self.scale_m;
        match self.family {
            KernelFamily::NegativeExponential => libm::exp(-r_m / s) / (2.0 * PI * s * s),
            KernelFamily::Gaussian => libm::exp(-r_m * r_m / (2.0 * s * s)) / (2.0 * PI * s * s),
            KernelFamily::TwoDt => {
                let u = s * s;
                let p = self.shape_p;
                p / (PI * u) * libm::pow(1.0 + r_m * r_m / u, -(p + 1.0))
            }
        }
    }

    /// Probability that a seed lands farther than `d_m` (closed forms, SCIENCE-CHECKS 8).
    pub fn tail_probability(&self, d_m: f64) -> f64 {
        let s = self.scale_m;
        match self.family {
            KernelFamily::NegativeExponential => (1.0 + d_m / s) * libm::exp(-d_m / s),
            KernelFamily::Gaussian => libm::exp(-d_m * d_m / (2.0 * s * s)),
            KernelFamily::TwoDt => libm::pow(1.0 + d_m * d_m / (s * s), -self.shape_p),
        }
    }

    /// Mean dispersal distance, m (closed forms; Clark et al. 1999 for 2Dt).
    pub fn mean_distance_m(&self) -> f64 {
        match self.family {
            KernelFamily::NegativeExponential => 2.0 * self.scale_m,
            KernelFamily::Gaussian => self.scale_m * (std::f64::consts::PI / 2.0).sqrt(),
            KernelFamily::TwoDt => self.scale_m * two_dt_mean_factor(self.shape_p),
        }
    }

    /// The kernel as a sum of normalised 2-D Gaussians: (weight, sigma per axis in m),
    /// weights summing to 1.
    pub fn gaussian_mixture(&self) -> Vec<(f64, f64)> {
        let s = self.scale_m;
        match self.family {
            KernelFamily::Gaussian => vec![(1.0, s)],
            // sigma^2 = 2 a^2 x, x ~ Gamma(3/2, 1).
            KernelFamily::NegativeExponential => gamma_nodes(1.5, QUADRATURE_STEP)
                .into_iter()
                .map(|(w, x)| (w, (2.0 * s * s * x).sqrt()))
                .collect(),
            // 1/(2 sigma^2) = x/u, x ~ Gamma(p, 1).
            KernelFamily::TwoDt => gamma_nodes(
                self.shape_p,
                QUADRATURE_STEP_2DT / self.shape_p.max(1.0).sqrt(),
            )
            .into_iter()
            .map(|(w, x)| (w, (s * s / (2.0 * x)).sqrt()))
            .collect(),
        }
    }

    /// Draws a dispersal distance, m, by inverting the distance distribution.
    pub fn sample_distance_m<R: Rng + ?Sized>(&self, rng: &mut R) -> f64 {
        let s = self.scale_m;
        match self.family {
            // The distance of a radial exponential is Gamma(2, a): a sum of two exponentials.
            KernelFamily::NegativeExponential => {
                -s * libm::log(uniform_open(rng) * uniform_open(rng))
            }
            KernelFamily::Gaussian => s * (-2.0 * libm::log(uniform_open(rng))).sqrt(),
            KernelFamily::TwoDt => {
                let tail = uniform_open(rng);
                s * (libm::pow(tail, -1.0 / self.shape_p) - 1.0).max(0.0).sqrt()
            }
        }
    }
}

/// A uniform number in (0, 1) from 53 random bits.
pub fn uniform_open<R: Rng + ?Sized>(rng: &mut R) -> f64 {
    ((rng.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
}

/// E[r] / sqrt(u) of the 2Dt kernel: (sqrt(pi) / 2) Gamma(p - 1/2) / Gamma(p).
fn two_dt_mean_factor(p: f64) -> f64 {
    std::f64::consts::PI.sqrt() / 2.0 * libm::exp(ln_gamma(p - 0.5) - ln_gamma(p))
}

/// ln Gamma(x) for x > 0 (Lanczos approximation, g = 7, nine terms; relative error ~1e-15).
pub fn ln_gamma(x: f64) -> f64 {
    const COEFFICIENTS: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    use std::f64::consts::PI;
    if x < 0.5 {
        return libm::log(PI / libm::sin(PI * x)) - ln_gamma(1.0 - x);
    }
    let x = x - 1.0;
    let mut sum = COEFFICIENTS[0];
    for (i, &c) in COEFFICIENTS.iter().enumerate().skip(1) {
        sum += c / (x + i as f64);
    }
    let t = x + 7.5;
    0.5 * libm::log(2.0 * PI) + (x + 0.5) * libm::log(t) - t + libm::log(sum)
}

/// Nodes and weights of the trapezoid rule in y = ln x for x ~ Gamma(shape, 1).
fn gamma_nodes(shape: f64, step: f64) -> Vec<(f64, f64)> {
    let log_density = |y: f64| shape * y - libm::exp(y);
    let y_mode = libm::log(shape);
    let peak = log_density(y_mode);
    let floor = peak + libm::log(QUADRATURE_CUTOFF);
    let mut nodes = Vec::new();
    let mut j = 0i32;
    loop {
        let y = y_mode - f64::from(j) * step;
        if log_density(y) < floor {
            break;
        }
        nodes.push(y);
        j += 1;
    }
    j = 1;
    loop {
        let y = y_mode + f64::from(j) * step;
        if log_density(y) < floor {
            break;
        }
        nodes.push(y);
        j += 1;
    }
    let total: f64 = nodes
        .iter()
        .map(|&y| libm::exp(log_density(y) - peak))
        .sum();
    nodes
        .into_iter()
        .map(|y| (libm::exp(log_density(y) - peak) / total, libm::exp(y)))
        .collect()
}

/// Direct convolution with the closed-form density averaged over 8 x 8 points per cell,
/// taps out to `radius_cells` (absorbing edge). O(N R^2): the reference the fast method is
/// checked against.
pub fn direct_convolution(
    kernel: &Kernel,
    cell_size_m: f64,
    n_cols: usize,
    n_rows: usize,
    radius_cells: usize,
    production: &[f32],
    rain: &mut [f32],
) {
    let taps = direct_taps(kernel, cell_size_m, radius_cells);
    let width = 2 * radius_cells + 1;
    let r = radius_cells as isize;
    for row in 0..n_rows as isize {
        for col in 0..n_cols as isize {
            let mut sum = 0.0f32;
            for dr in -r..=r {
                let src_row = row - dr;
                if src_row < 0 || src_row >= n_rows as isize {
                    continue;
                }
                let tap_row = &taps[((dr + r) as usize) * width..((dr + r) as usize + 1) * width];
                let base = src_row as usize * n_cols;
                for dc in -r..=r {
                    let src_col = col - dc;
                    if src_col < 0 || src_col >= n_cols as isize {
                        continue;
                    }
                    sum += tap_row[(dc + r) as usize] * production[base + src_col as usize];
                }
            }
            rain[row as usize * n_cols + col as usize] = sum;
        }
    }
}

/// Cell-averaged kernel mass per cell offset, (2R+1)^2 taps, row-major.
pub fn direct_taps(kernel: &Kernel, cell_size_m: f64, radius_cells: usize) -> Vec<f32> {
    const SUB: usize = 8;
    let r = radius_cells as isize;
    let area = cell_size_m * cell_size_m;
    let mut taps = Vec::with_capacity((2 * radius_cells + 1).pow(2));
    for dr in -r..=r {
        for dc in -r..=r {
            let mut sum = 0.0;
            for i in 0..SUB {
                for j in 0..SUB {
                    let y = (dr as f64 - 0.5 + (i as f64 + 0.5) / SUB as f64) * cell_size_m;
                    let x = (dc as f64 - 0.5 + (j as f64 + 0.5) / SUB as f64) * cell_size_m;
                    sum += kernel.density_per_m2((x * x + y * y).sqrt());
                }
            }
            taps.push((sum / (SUB * SUB) as f64 * area) as f32);
        }
    }
    taps
}

/// Checks a kernel description from a scenario.
pub fn validate_kernel(
    field: &str,
    family: KernelFamily,
    mean_m: f64,
    shape_p: f64,
) -> Result<Kernel, VegetationError> {
    Kernel::from_mean(family, mean_m, shape_p).map_err(|e| match e {
        VegetationError::OutOfRange {
            value,
            min,
            max,
            unit,
            ..
        } => VegetationError::OutOfRange {
            field: field.to_string(),
            value,
            min,
            max,
            unit,
        },
        other => other,
    })
}
