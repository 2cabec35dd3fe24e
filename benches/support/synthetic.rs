//! Seeded synthetic regression data for the scale measurements: a known
//! smooth function of the inputs plus Gaussian noise (invented, not
//! measurements of anything).
//!
//! Inputs x_1 … x_d are independent and uniform on [0, 1]. The target is
//!
//! ```text
//! y = Σ_{j=1..d} 2/(1 + j) · sin(π x_j) + 2 (x_1 − 0.5)(x_2 − 0.5) + ε,
//! ε ~ N(0, 0.1²)
//! ```
//!
//! so that the inputs matter less and less (what automatic relevance
//! determination should find), one pair interacts, and the noise level is
//! known (sd 0.1): a trained committee's noise estimate can be compared
//! with it.

#![allow(dead_code)]

use mettle::fixedmath::FixedMath;
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;

/// The known noise sd of the target.
pub const NOISE_SD: f64 = 0.1;

/// Name of input `j` (0-based).
pub fn input_name(j: usize) -> String {
    format!("x{:02}", j + 1)
}

/// The noise-free target for one row.
pub fn truth(x: &[f64]) -> f64 {
    let mut y: f64 = x
        .iter()
        .enumerate()
        .map(|(j, v)| 2.0 / (2.0 + j as f64) * (std::f64::consts::PI * v).sin_fixed())
        .sum();
    if x.len() >= 2 {
        y += 2.0 * (x[0] - 0.5) * (x[1] - 0.5);
    }
    y
}

/// `n_rows` rows of `n_inputs` inputs and the target `y`, as columns
/// (inputs first, then `y`), from `seed`.
pub fn columns(n_rows: usize, n_inputs: usize, seed: u64) -> Vec<(String, Vec<f64>)> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let noise = Normal::new(0.0, NOISE_SD).expect("a positive sd");
    let mut cols: Vec<Vec<f64>> = vec![Vec::with_capacity(n_rows); n_inputs + 1];
    let mut row = vec![0.0; n_inputs];
    for _ in 0..n_rows {
        for v in row.iter_mut() {
            *v = rng.random::<f64>();
        }
        for (c, v) in cols.iter_mut().zip(&row) {
            c.push(*v);
        }
        cols[n_inputs].push(truth(&row) + noise.sample(&mut rng));
    }
    let mut names: Vec<String> = (0..n_inputs).map(input_name).collect();
    names.push("y".to_string());
    names.into_iter().zip(cols).collect()
}
