//! Seeded near-noiseless regression data (INVENTED: a made-up smooth
//! function, not measurements of anything), for the calibration check of
//! a process whose noise is tiny beside the model's own uncertainty
//! (docs/benchmarks.md, "Calibration when the noise is tiny").
//!
//! Inputs x_1 … x_12 are independent and uniform on [0, 1]. The target is
//!
//! ```text
//! f(x) = sin(π x_1)(1 + 0.5 x_2) + 0.5 e^(0.8 x_3) + 2 (x_4 − 0.5)²
//!      + tanh(3 (x_5 − 0.5)) x_6 + 0.5 x_7 x_8 + 0.15 cos(2π x_9)
//!      + 0.2 x_10 + 0.05 x_11 + 0 · x_12
//! y = f(x) + ε,   ε ~ N(0, σ²),   σ = 1e-4 · (max f − min f over the rows)
//! ```
//!
//! smooth, with interactions, curvature and inputs of falling importance
//! (x_12 has none), so that a network committee fits it closely but not
//! exactly: its own uncertainty, not the noise, dominates the error bars.

#![allow(dead_code)]

use mettle::fixedmath::FixedMath;
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;

/// Inputs of the generator.
pub const N_INPUTS: usize = 12;

/// Noise sd as a share of the range of the noise-free target.
pub const NOISE_SHARE_OF_RANGE: f64 = 1e-4;

/// Name of input `j` (0-based).
pub fn input_name(j: usize) -> String {
    format!("x{:02}", j + 1)
}

/// The noise-free target for one row of `N_INPUTS` inputs.
pub fn truth(x: &[f64]) -> f64 {
    use std::f64::consts::PI;
    (PI * x[0]).sin_fixed() * (1.0 + 0.5 * x[1])
        + 0.5 * (0.8 * x[2]).exp_fixed()
        + 2.0 * (x[3] - 0.5).powi(2)
        + (3.0 * (x[4] - 0.5)).tanh_fixed() * x[5]
        + 0.5 * x[6] * x[7]
        + 0.15 * (2.0 * PI * x[8]).cos_fixed()
        + 0.2 * x[9]
        + 0.05 * x[10]
}

/// `n_rows` rows as columns (inputs `x01` … `x12`, then `y`), from `seed`,
/// with the noise sd used.
pub fn columns(n_rows: usize, seed: u64) -> (Vec<(String, Vec<f64>)>, f64) {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut cols: Vec<Vec<f64>> = (0..=N_INPUTS).map(|_| Vec::with_capacity(n_rows)).collect();
    let mut row = [0.0; N_INPUTS];
    for _ in 0..n_rows {
        for v in row.iter_mut() {
            *v = rng.random::<f64>();
        }
        for (c, v) in cols.iter_mut().zip(&row) {
            c.push(*v);
        }
        cols[N_INPUTS].push(truth(&row));
    }
    let (lo, hi) = cols[N_INPUTS]
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    let sd = NOISE_SHARE_OF_RANGE * (hi - lo);
    let noise = Normal::new(0.0, sd).expect("a positive sd");
    for v in cols[N_INPUTS].iter_mut() {
        *v += noise.sample(&mut rng);
    }
    let mut names: Vec<String> = (0..N_INPUTS).map(input_name).collect();
    names.push("y".into());
    (names.into_iter().zip(cols).collect(), sd)
}
