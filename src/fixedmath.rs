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

#[cfg(test)]
mod tests {
    use super::FixedMath;

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
