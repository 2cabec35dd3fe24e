//! This core's double-precision multiply-add rate: the arithmetic ceiling
//! against which issue 28's prediction-rate target is read.
//!
//! Twelve independent chains of 4-wide fused multiply-adds (AVX2 + FMA,
//! `vfmadd` on `__m256d`), enough to cover the instruction's latency on
//! current x86 cores (4–5 cycles at 2 per cycle: Agner Fog, "Instruction
//! tables", for Zen and Skylake — the exact figures from memory). No loads
//! or stores in the loop: a rate no real kernel exceeds.
//!
//! The exact Laplace variance of one member with W weights costs
//! W(W+1)/2 multiply-adds per row (a triangular solve, then a squared
//! norm: `committee::fast`), so a 10-member committee of 10-unit networks on
//! 8 inputs (W = 10·9 + 11 = 101) needs 51 510 per row before the forward
//! passes, the domain guard and the CSV.

/// Multiply-adds of one call to [`run`] per unit of `iters`.
pub const MADDS_PER_ITER: u64 = 12 * 4;

/// Multiply-adds per row of the exact variance of `members` members of
/// `weights` weights each: Σ W(W+1)/2.
pub fn exact_variance_madds(members: u64, weights: u64) -> u64 {
    members * weights * (weights + 1) / 2
}

/// Run `iters` rounds of twelve 4-wide fused multiply-adds; returns a value
/// that depends on every one of them (so that none is optimised away), or
/// `None` on a CPU without AVX2 and FMA.
pub fn run(iters: u64) -> Option<f64> {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
        {
            // SAFETY: the features the function is compiled for were just detected.
            return Some(unsafe { chains(iters) });
        }
    }
    let _ = iters;
    None
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn chains(iters: u64) -> f64 {
    use std::arch::x86_64::{
        __m256d, _mm256_add_pd, _mm256_fmadd_pd, _mm256_set1_pd, _mm256_storeu_pd,
    };
    let a = _mm256_set1_pd(0.999_999_9);
    let b = _mm256_set1_pd(1e-9);
    let mut acc: [__m256d; 12] = [_mm256_set1_pd(1.0); 12];
    for _ in 0..iters {
        for v in &mut acc {
            *v = _mm256_fmadd_pd(*v, a, b);
        }
    }
    let mut sum = acc[0];
    for v in &acc[1..] {
        sum = _mm256_add_pd(sum, *v);
    }
    let mut out = [0.0; 4];
    // SAFETY: `out` holds four f64, the width of the store.
    unsafe { _mm256_storeu_pd(out.as_mut_ptr(), sum) };
    out.iter().sum()
}
