//! The plant model's random draws: a Poisson count for long-distance events, and a
//! counter-based hash for first establishment, so the cell loop carries no generator state.

use rand::Rng;

use crate::plants::kernels::uniform_open;

/// A Poisson draw (Knuth's product method below 30, a rounded normal above).
pub(super) fn poisson<R: Rng + ?Sized>(rng: &mut R, mean: f64) -> usize {
    if mean < 30.0 {
        let limit = libm::exp(-mean);
        let mut product = uniform_open(rng);
        let mut k = 0;
        while product > limit {
            product *= uniform_open(rng);
            k += 1;
        }
        k
    } else {
        let z = (-2.0 * libm::log(uniform_open(rng))).sqrt()
            * libm::cos(std::f64::consts::TAU * uniform_open(rng));
        (mean + mean.sqrt() * z).round().max(0.0) as usize
    }
}

/// Key of one year's establishment draws of type `t`.
pub(super) fn draw_key(seed: u64, year: i32, t: usize) -> u32 {
    let mixed =
        seed ^ (u64::from(year as u32) << 8) ^ (t as u64).wrapping_mul(0xD6E8_FEB8_6659_FD93);
    let folded = (mixed ^ (mixed >> 32)) as u32;
    hash32(folded.wrapping_add(0x632B_E5AB))
}

/// A 32-bit integer hash with good avalanche ("lowbias32" of Wellons' hash prospector,
/// 2018, from memory): two multiply-xorshift rounds.
#[inline]
pub(super) fn hash32(x: u32) -> u32 {
    let mut x = x;
    x ^= x >> 16;
    x = x.wrapping_mul(0x7FEB_352D);
    x ^= x >> 15;
    x = x.wrapping_mul(0x846C_A68B);
    x ^= x >> 16;
    x
}

/// A uniform number in [0, 1) from the hash of a counter; fine resolution near 0, where
/// small establishment probabilities are compared.
#[inline]
pub(super) fn hash_uniform(counter: u32) -> f32 {
    (hash32(counter) >> 1) as i32 as f32 * (1.0 / 2_147_483_648.0)
}
