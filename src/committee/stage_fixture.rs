//! Small data shared by the unit tests of the training stages.

use crate::fixedmath::FixedMath;
use ndarray::{Array1, Array2};
use rand::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

use super::{CheckedCommitteeParams, CommitteeParams};
use crate::evidence::FitSettings;
pub(super) use crate::observer::Silent;

/// `n` rows of t = sin(3 x₀) / 2 + x₁ / 4 + uniform noise (sd 0.05), inputs
/// uniform on [−0.5, 0.5] (a synthetic function; no outside source).
pub(super) fn small_data(n: usize) -> (Array2<f64>, Array1<f64>) {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(27);
    let x: Array2<f64> = Array2::from_shape_fn((n, 2), |_| rng.random_range(-0.5..0.5));
    let t = Array1::from_shape_fn(n, |i| {
        (3.0 * x[[i, 0]]).sin_fixed() / 2.0 + x[[i, 1]] / 4.0 + rng.random_range(-0.0866..0.0866)
    });
    (x, t)
}

/// A small, quick search: 1–2 hidden units, 2 restarts, short fits.
pub(super) fn params() -> CheckedCommitteeParams {
    CommitteeParams::default()
        .hidden(1, 2)
        .restarts(2)
        .widen(false)
        .seed(3)
        .fit(FitSettings {
            max_cycles: 4,
            first_iters: 60,
            cycle_iters: 30,
            ..FitSettings::default()
        })
        .check()
        .expect("valid settings")
}
