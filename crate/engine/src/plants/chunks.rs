//! The chunk index's reductions: per-chunk maxima, sums and signs over a layer, written in
//! f32 lanes so the loops vectorise. The chunk index lets a type skip every chunk of cells
//! where it is absent and cannot establish.

use crate::plants::establishment::larger;

/// Sum of a layer in f32 lanes, then f64 (lanes keep the loop vectorised).
pub(crate) fn lane_sum(values: &[f32]) -> f64 {
    let mut total = 0.0f64;
    for chunk in values.chunks(4096) {
        let mut lanes = [0.0f32; 16];
        let mut blocks = chunk.chunks_exact(16);
        for block in &mut blocks {
            for (lane, &v) in lanes.iter_mut().zip(block) {
                *lane += v;
            }
        }
        let rest: f32 = blocks.remainder().iter().sum();
        total += f64::from(lanes.iter().sum::<f32>() + rest);
    }
    total
}

/// Largest value of a chunk, in lanes so that it vectorises (comparisons, no `f32::max`).
pub(crate) fn chunk_max(values: &[f32]) -> f32 {
    let mut lanes = [f32::NEG_INFINITY; 16];
    let mut blocks = values.chunks_exact(16);
    for block in &mut blocks {
        for (lane, &v) in lanes.iter_mut().zip(block) {
            *lane = larger(*lane, v);
        }
    }
    let rest = blocks
        .remainder()
        .iter()
        .fold(f32::NEG_INFINITY, |a, &v| larger(a, v));
    lanes.iter().fold(rest, |a, &v| larger(a, v))
}

/// Whether every value of a chunk is above zero.
pub(crate) fn all_positive(values: &[f32]) -> bool {
    values.iter().fold(true, |all, &v| all & (v > 0.0))
}

/// Largest negated value of a chunk: minus its smallest value.
pub(crate) fn chunk_max_negated(values: &[f32]) -> f32 {
    values.iter().fold(f32::NEG_INFINITY, |a, &v| larger(a, -v))
}
