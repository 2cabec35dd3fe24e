//! Elementary functions whose results do not depend on the CPU.
//!
//! Rust's `f64::exp`, `ln`, `tanh`, `powf`, `sin`, … call the system C
//! library, and glibc 2.36 picks FMA builds of `exp`, `log`, `pow` and `sin`
//! at run time on CPUs with FMA and AVX2: the last bit of a result then
//! depends on the machine, and training's near-tied choices (members,
//! committee size, noise model) can follow that bit (DEVELOPERS.md, "The same
//! model on any CPU"). These methods call the `libm` crate instead, a
//! pure-Rust port of musl's libm (itself from FreeBSD's msun) maintained by
//! the Rust project, compiled for the x86-64 baseline like the rest of the
//! crate: the same bits on every CPU. `sqrt` and `powi` need no replacement
//! (IEEE 754 rounds `sqrt` correctly; `powi` is repeated multiplication).
//!
//! `clippy.toml` disallows the standard methods, so new code cannot call the
//! system's by accident.

/// CPU-independent elementary functions on `f64` (see the module's text).
pub trait FixedMath: Sized {
    /// eˣ.
    fn exp_fixed(self) -> Self;
    /// eˣ − 1, accurate near 0.
    fn exp_m1_fixed(self) -> Self;
    /// Natural logarithm.
    fn ln_fixed(self) -> Self;
    /// ln(1 + x), accurate near 0.
    fn ln_1p_fixed(self) -> Self;
    /// Decimal logarithm.
    fn log10_fixed(self) -> Self;
    /// Binary logarithm.
    fn log2_fixed(self) -> Self;
    /// xʸ.
    fn powf_fixed(self, y: Self) -> Self;
    /// Hyperbolic tangent.
    fn tanh_fixed(self) -> Self;
    /// Hyperbolic cosine.
    fn cosh_fixed(self) -> Self;
    /// Sine.
    fn sin_fixed(self) -> Self;
    /// Cosine.
    fn cos_fixed(self) -> Self;
    /// Arcsine.
    fn asin_fixed(self) -> Self;
    /// Arctangent.
    fn atan_fixed(self) -> Self;
    /// √(x² + y²) without overflow.
    fn hypot_fixed(self, y: Self) -> Self;
    /// Cube root.
    fn cbrt_fixed(self) -> Self;
}

impl FixedMath for f64 {
    fn exp_fixed(self) -> f64 {
        libm::exp(self)
    }
    fn exp_m1_fixed(self) -> f64 {
        libm::expm1(self)
    }
    fn ln_fixed(self) -> f64 {
        libm::log(self)
    }
    fn ln_1p_fixed(self) -> f64 {
        libm::log1p(self)
    }
    fn log10_fixed(self) -> f64 {
        libm::log10(self)
    }
    fn log2_fixed(self) -> f64 {
        libm::log2(self)
    }
    fn powf_fixed(self, y: f64) -> f64 {
        libm::pow(self, y)
    }
    fn tanh_fixed(self) -> f64 {
        libm::tanh(self)
    }
    fn cosh_fixed(self) -> f64 {
        libm::cosh(self)
    }
    fn sin_fixed(self) -> f64 {
        libm::sin(self)
    }
    fn cos_fixed(self) -> f64 {
        libm::cos(self)
    }
    fn asin_fixed(self) -> f64 {
        libm::asin(self)
    }
    fn atan_fixed(self) -> f64 {
        libm::atan(self)
    }
    fn hypot_fixed(self, y: f64) -> f64 {
        libm::hypot(self, y)
    }
    fn cbrt_fixed(self) -> f64 {
        libm::cbrt(self)
    }
}

/// eˣ of every element in place, each the bits of `libm::exp` (unit test):
/// FreeBSD's `e_exp.c` as the `libm` crate ports it, step for step, as a
/// loop without calls or data-dependent jumps that the compiler turns into
/// vector instructions (both branches of the reduction formed, one kept),
/// for |x| below 708.39 where the source takes no special path and its
/// final `scalbn(y, k)` is the one exact product y·2ᵏ (−1022 ≤ k ≤ 1022);
/// the rare other elements (underflow, overflow, NaN) by `libm::exp`
/// itself. Reduction x = k·ln 2 + r with k the integer part of
/// x/ln 2 ± ½ above 1.5 ln 2, k = ±1 above ½ ln 2, else 0; then
/// eʳ = 1 + r + r·c/(2 − c) with c from a degree-5 Remez polynomial
/// (error < 2⁻⁵⁹; the source's comment); below 2⁻²⁸, 1 + x. Compiled for
/// the baseline and with AVX (chosen at run time; no fused multiply-add
/// in either), the same bits either way.
pub fn exp_in_place(v: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx") {
            // SAFETY: the CPU has AVX, the only feature the function enables.
            #[allow(unsafe_code)]
            return unsafe { exp_in_place_avx(v) };
        }
    }
    exp_in_place_body(v);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx")]
fn exp_in_place_avx(v: &mut [f64]) {
    exp_in_place_body(v);
}

#[inline(always)]
fn exp_in_place_body(v: &mut [f64]) {
    const CHUNK: usize = 32;
    let mut orig = [0.0; CHUNK];
    for chunk in v.chunks_mut(CHUNK) {
        orig[..chunk.len()].copy_from_slice(chunk);
        for x in chunk.iter_mut() {
            *x = exp_core(*x);
        }
        for (x, o) in chunk.iter_mut().zip(&orig) {
            if o.is_nan() || o.abs() >= EXP_CORE_LIMIT {
                *x = libm::exp(*o);
            }
        }
    }
}

/// |x| from which `libm::exp` takes its special path: a high word of |x|
/// of 0x4086232b or more (708.39…).
const EXP_CORE_LIMIT: f64 = f64::from_bits(0x4086_232b_0000_0000);

/// The constants of FreeBSD's `e_exp.c` (as the `libm` crate ports it), by
/// their bits (its comments give them so), shared by [`exp_core`] and the
/// hidden layer's tanh (`net::mlp`): ln 2 split in a high and a low part,
/// 1/ln 2, the degree-5 Remez coefficients, the high-word thresholds ½ ln 2
/// (above) and 1.5 ln 2 (from) as numbers, and 2⁵².
pub(crate) mod exp_consts {
    pub const LN2HI: f64 = f64::from_bits(0x3fe6_2e42_fee0_0000);
    pub const LN2LO: f64 = f64::from_bits(0x3dea_39ef_3579_3c76);
    pub const INVLN2: f64 = f64::from_bits(0x3ff7_1547_652b_82fe);
    pub const P1: f64 = f64::from_bits(0x3fc5_5555_5555_553e);
    pub const P2: f64 = f64::from_bits(0xbf66_c16c_16be_bd93);
    pub const P3: f64 = f64::from_bits(0x3f11_566a_af25_de2c);
    pub const P4: f64 = f64::from_bits(0xbebb_bd41_c5d2_6bf1);
    pub const P5: f64 = f64::from_bits(0x3e66_3769_72be_a4d0);
    pub const HALF_LN2_WORD_END: f64 = f64::from_bits(0x3fd6_2e42_ffff_ffff);
    pub const THREE_HALF_LN2_WORD: f64 = f64::from_bits(0x3ff0_a2b2_0000_0000);
    pub const TWO_52: f64 = 4_503_599_627_370_496.0;
}

/// The source's step after the reduction x = k·ln 2 + r (k a whole number
/// held as f64): hi = x − k·ln2hi, lo = k·ln2lo, r = hi − lo, c from the
/// Remez polynomial in r², and eʳ = 1 + (r·c/(2 − c) − lo + hi), before
/// the scaling by 2ᵏ (k = 0 gives hi = x, lo = 0, as the source's own
/// branch). The same IEEE operations in the same order as the source.
#[inline(always)]
pub(crate) fn exp_reduced(x: f64, k: f64) -> f64 {
    use exp_consts::{LN2HI, LN2LO, P1, P2, P3, P4, P5};
    let hi = x - k * LN2HI;
    let lo = k * LN2LO;
    let r = hi - lo;
    let rr = r * r;
    let c = r - rr * (P1 + rr * (P2 + rr * (P3 + rr * (P4 + rr * P5))));
    1.0 + (r * c / (2.0 - c) - lo + hi)
}

/// The source's exponential for |x| < [`EXP_CORE_LIMIT`], without jumps.
#[inline(always)]
fn exp_core(x: f64) -> f64 {
    use exp_consts::{HALF_LN2_WORD_END, INVLN2, THREE_HALF_LN2_WORD, TWO_52};
    // the source compares the high word of |x|: above 0x3fd62e42 (½ ln 2),
    // from 0x3ff0a2b2 (1.5 ln 2), above 0x3e300000 (2⁻²⁸)
    const TINY_WORD_END: f64 = f64::from_bits(0x3e30_0000_ffff_ffff);
    let ax = x.abs();
    let negative = x.is_sign_negative();
    // `(INVLN2·x ± ½) as i32` truncates toward zero
    let k_round = (INVLN2 * x + if negative { -0.5 } else { 0.5 }).trunc();
    let k = if ax >= THREE_HALF_LN2_WORD {
        k_round
    } else if ax > HALF_LN2_WORD_END {
        if negative {
            -1.0
        } else {
            1.0
        }
    } else {
        0.0
    };
    let y = exp_reduced(x, k);
    // 2ᵏ from its bits: k + 1023 is a whole number in [1, 2045], held in
    // the low bits of (k + 1023) + 2⁵² (NaN gives garbage; such elements
    // are redone by libm)
    let biased = ((k + 1023.0) + TWO_52).to_bits() - TWO_52.to_bits();
    let two_k = f64::from_bits((biased & 0x7ff) << 52);
    let scaled = y * two_k;
    if ax > TINY_WORD_END {
        scaled
    } else {
        1.0 + x
    }
}

#[cfg(test)]
mod tests {
    use super::FixedMath;

    /// [`exp_in_place`] (the dispatched build and the baseline one) equals
    /// `libm::exp` bit for bit: a dense grid over the whole range, the
    /// branch points of the source and their neighbours, random bit
    /// patterns, ±0, subnormals, ±∞ and NaN.
    #[test]
    fn exp_in_place_is_libm_exp_bit_for_bit() {
        use rand::{Rng, SeedableRng};
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(31);
        let mut xs: Vec<f64> = (0..=3_000_000)
            .map(|i| -750.0 + f64::from(i) * (1500.0 / 3_000_000.0))
            .collect();
        xs.extend((0..1_000_000).map(|_| rng.random_range(-3.0..3.0)));
        xs.extend((0..1_000_000).map(|_| -rng.random_range(0.0..1e-6_f64)));
        xs.extend((0..1_000_000).map(|_| f64::from_bits(rng.random::<u64>())));
        for word in [
            0x3fd6_2e42_u64,
            0x3ff0_a2b2,
            0x3e30_0000,
            0x4086_232b,
            0x4086_2e42,
        ] {
            for low in [0, 1, 0x7fff_ffff, 0xffff_fffe, 0xffff_ffff] {
                let b = (word << 32) | low;
                for bits in [b, b + 1, b - 1] {
                    xs.push(f64::from_bits(bits));
                    xs.push(-f64::from_bits(bits));
                }
            }
        }
        xs.extend([
            0.0,
            -0.0,
            f64::MIN_POSITIVE,
            -f64::MIN_POSITIVE,
            5e-324,
            -5e-324,
            -708.0,
            -708.396_418_532_264_1,
            -745.133_219_101_941_1,
            709.782_712_893_384,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::NAN,
        ]);
        let mut dispatched = xs.clone();
        super::exp_in_place(&mut dispatched);
        let mut portable = xs.clone();
        super::exp_in_place_body(&mut portable);
        for ((x, d), p) in xs.iter().zip(&dispatched).zip(&portable) {
            let want = libm::exp(*x);
            if want.is_nan() {
                assert!(d.is_nan() && p.is_nan(), "exp({x:e})");
                continue;
            }
            assert_eq!(d.to_bits(), want.to_bits(), "exp({x:e})");
            assert_eq!(p.to_bits(), want.to_bits(), "portable exp({x:e})");
        }
    }

    /// Values from the definitions, exact to the digits written:
    /// e = 2.718281828459045… (15 digits, from memory, the constant
    /// `std::f64::consts::E` states the same), ln 10 and sin(π/6) = ½.
    #[test]
    fn known_values() {
        assert!((1.0_f64.exp_fixed() - std::f64::consts::E).abs() <= f64::EPSILON * 4.0);
        assert!((10.0_f64.ln_fixed() - std::f64::consts::LN_10).abs() <= f64::EPSILON * 4.0);
        assert!((std::f64::consts::FRAC_PI_6.sin_fixed() - 0.5).abs() <= f64::EPSILON);
        assert!((8.0_f64.cbrt_fixed() - 2.0).abs() <= f64::EPSILON * 2.0);
        assert!((3.0_f64.hypot_fixed(4.0) - 5.0).abs() <= f64::EPSILON * 8.0);
        assert!((1000.0_f64.log10_fixed() - 3.0).abs() <= f64::EPSILON * 4.0);
        assert!((2.0_f64.powf_fixed(10.0) - 1024.0).abs() <= f64::EPSILON * 1024.0);
    }
}
