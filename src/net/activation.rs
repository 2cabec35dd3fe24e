//! The hidden units' activation, tanh, computed so that every build and
//! every CPU gives the same bits: one exponential ([`exp_mid`], libm's
//! `exp` step for step) in a formula of Abramowitz & Stegun (1964), and a
//! slice form the network's passes inline into their builds.

/// tanh(x) from one exponential: `sign(x)·(1 − 2/(e^{2|x|} + 1))`, with
/// its Taylor series `x − x³/3 + 2x⁵/15 − 17x⁷/315` below |x| = 0.02 where
/// that form loses relative precision. Absolute error ≤ 3·10⁻¹⁶ against
/// the C library's `tanh`, which is 2–3 times slower and was most of the
/// training time (it goes through `expm1`). The identity and the series are
/// standard (Abramowitz & Stegun 1964, 4.5.17 and 4.5.64). The exponential
/// is [`exp_mid`], the same bits as `libm::exp` on the arguments it gets.
#[inline(always)]
pub fn tanh(x: f64) -> f64 {
    let ax = x.abs();
    let x2 = x * x;
    let series = x * (1.0 + x2 * (-1.0 / 3.0 + x2 * (2.0 / 15.0 - x2 * (17.0 / 315.0))));
    // above |x| = 20, e^{2|x|} > 2⁵⁷ and 1 − 2/(e + 1) rounds to 1 exactly
    let z = if ax > TANH_SATURATES {
        2.0 * TANH_SATURATES
    } else {
        2.0 * ax
    };
    let e = exp_mid(z);
    let long = (1.0 - 2.0 / (e + 1.0)).copysign(x);
    if ax < 0.02 {
        series
    } else {
        long
    }
}

/// |x| above which tanh(x) = ±1 in f64 by the formula of [`tanh`]:
/// e^{2·20} ≈ 2.4·10¹⁷, 2/(e + 1) < 2⁻⁵⁴ (half an ulp below 1).
const TANH_SATURATES: f64 = 20.0;

/// tanh of every element in place by [`tanh_slice`], compiled with AVX
/// where the CPU has it, else for the baseline — the two builds the passes
/// inline it into ([`super::passes`]); both perform the same IEEE
/// operations on each element, so the same bits (unit test).
#[cfg(test)]
pub fn tanh_in_place(v: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            // SAFETY: the CPU has AVX, the only feature the function enables.
            #[allow(unsafe_code)]
            return unsafe { tanh_in_place_avx(v) };
        }
    }
    tanh_slice(v);
}

/// tanh of every element in place, each as [`tanh`] gives it (the same
/// bits): a loop without calls or data-dependent jumps, which the compiler
/// turns into vector instructions; the passes inline it into each of their
/// builds ([`super::passes`]).
#[inline(always)]
pub(super) fn tanh_slice(v: &mut [f64]) {
    for x in v.iter_mut() {
        *x = tanh(*x);
    }
}

#[cfg(all(test, target_arch = "x86_64"))]
#[target_feature(enable = "avx")]
fn tanh_in_place_avx(v: &mut [f64]) {
    tanh_slice(v);
}

/// eˣ for 0 ≤ x ≤ 40 (and NaN), the algorithm of FreeBSD's `e_exp.c` as
/// the `libm` crate ports it, step for step, without its branches for
/// overflow, underflow and tiny arguments (none arises on this range) and
/// with the final scaling by 2ᵏ as one exact product (y·2ᵏ stays normal
/// for k ≤ 58): the same IEEE operations in the same order, so the same
/// bits as `libm::exp` (unit test over the range and at its branch
/// points). Reduction x = k·ln 2 + r with k = ⌊x/ln 2 + ½⌋ above 1.5 ln 2,
/// k = 1 above ½ ln 2, else 0; then eʳ = 1 + r + r·c/(2 − c) with c from
/// a degree-5 Remez polynomial (error < 2⁻⁵⁹; the source's comment).
#[inline(always)]
pub(super) fn exp_mid(x: f64) -> f64 {
    use crate::fixedmath::exp_consts::{HALF_LN2_WORD_END, INVLN2, THREE_HALF_LN2_WORD, TWO_52};
    // the source compares the high word of |x|: above 0x3fd62e42 (½ ln 2)
    // and from 0x3ff0a2b2 (1.5 ln 2); for x ≥ 0 the same as these compares.
    // The source's `(INVLN2·x + ½) as i32`, by floating-point steps that
    // vectorise: for 0 ≤ v < 2⁵¹, (v + 2⁵²) − 2⁵² is v rounded to the
    // nearest whole number (exact), one less where that rounded up
    let v = INVLN2 * x + 0.5;
    let nearest = (v + TWO_52) - TWO_52;
    let k_round = if nearest > v { nearest - 1.0 } else { nearest };
    let k = if x >= THREE_HALF_LN2_WORD {
        k_round
    } else if x > HALF_LN2_WORD_END {
        1.0
    } else {
        0.0
    };
    let y = crate::fixedmath::exp_reduced(x, k);
    // 2ᵏ from its bits: k + 2⁵² holds k in its low bits (k is a whole
    // number, 0 ≤ k ≤ 58; 0 for NaN)
    let k_bits = (k + TWO_52).to_bits() - TWO_52.to_bits();
    let two_k = f64::from_bits((k_bits + 1023) << 52);
    y * two_k
}
