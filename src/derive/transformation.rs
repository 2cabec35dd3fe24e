//! Transformation temperatures (Ms, Ac1, Ac3) and the martensite fraction
//! after Koistinen & Marburger.
//!
//! Compositions in wt%, temperatures in °C.

use super::{check_composition, Composition, Limit};
use crate::fixedmath::FixedMath;

/// Koistinen–Marburger rate constant, 1/K (Koistinen & Marburger 1959).
pub const KM_RATE: f64 = 0.011;

/// Martensite-start temperature after Andrews, °C:
///
/// Ms = 539 − 423C − 30.4Mn − 17.7Ni − 12.1Cr − 7.5Mo
///
/// Source: Andrews (1965), J. Iron Steel Inst. 203:721. Validity: low-alloy
/// steels with C < 0.6 wt% (agreed across sources), checked by
/// [`check_andrews`]. From memory, the data behind it spanned roughly
/// C 0.11–0.6, Mn up to ~4.9, Ni up to ~5, Cr up to ~4.5, Mo up to ~5.4 wt%;
/// those figures are unchecked and not enforced.
pub fn ms_andrews(comp: &Composition) -> f64 {
    539.0 - 423.0 * comp.c - 30.4 * comp.mn - 17.7 * comp.ni - 12.1 * comp.cr - 7.5 * comp.mo
}

/// Martensite-start temperature after Steven & Haynes, °C:
///
/// Ms = 561 − 474C − 33Mn − 17Ni − 17Cr − 21Mo
///
/// Source: Steven & Haynes (1956), J. Iron Steel Inst. 183:349. Validity: the
/// reference documents no range. From memory (unchecked) the steels studied
/// spanned about C 0.1–0.55, Mn 0.2–1.7, Ni ≤ 5.0, Cr ≤ 3.5, Mo ≤ 1.0 wt%;
/// [`check_steven_haynes`] warns on these, labelled as from memory.
pub fn ms_steven_haynes(comp: &Composition) -> f64 {
    561.0 - 474.0 * comp.c - 33.0 * comp.mn - 17.0 * comp.ni - 17.0 * comp.cr - 21.0 * comp.mo
}

/// Lower critical temperature on heating after Andrews, °C:
///
/// Ac1 = 723 − 10.7Mn − 16.9Ni + 29.1Si + 16.9Cr + 290As + 6.38W
///
/// Source: Andrews (1965), J. Iron Steel Inst. 203:721; low-alloy steels with
/// C < 0.6 wt% ([`check_andrews`]).
pub fn ac1_andrews(comp: &Composition) -> f64 {
    723.0 - 10.7 * comp.mn - 16.9 * comp.ni
        + 29.1 * comp.si
        + 16.9 * comp.cr
        + 290.0 * comp.as_
        + 6.38 * comp.w
}

/// Upper critical temperature on heating after Andrews, core terms, °C:
///
/// Ac3 = 910 − 203·√C − 15.2Ni + 44.7Si + 104V + 31.5Mo + 13.1W − 30Mn
///
/// Source: Andrews (1965), J. Iron Steel Inst. 203:721; low-alloy steels with
/// C < 0.6 wt% ([`check_andrews`]). The further terms in Cr, Cu, P, Al, As and
/// Ti are left out: their signs differ between secondary sources and have
/// not been checked. A negative C gives NaN (√C undefined).
pub fn ac3_andrews(comp: &Composition) -> f64 {
    910.0 - 203.0 * comp.c.sqrt() - 15.2 * comp.ni
        + 44.7 * comp.si
        + 104.0 * comp.v
        + 31.5 * comp.mo
        + 13.1 * comp.w
        - 30.0 * comp.mn
}

/// Validity warnings for the Andrews formulas ([`ms_andrews`],
/// [`ac1_andrews`], [`ac3_andrews`]): C < 0.6 wt% (published), negative
/// contents.
pub fn check_andrews(comp: &Composition) -> Vec<String> {
    check_composition(
        "Andrews (1965)",
        comp,
        &[Limit::below("C", "wt%", 0.6, false)],
    )
}

/// Composition range of the Steven & Haynes data (from memory, unchecked).
const STEVEN_HAYNES_LIMITS: [Limit; 5] = [
    Limit::between("C", "wt%", 0.1, 0.55, true),
    Limit::between("Mn", "wt%", 0.2, 1.7, true),
    Limit::at_most("Ni", "wt%", 5.0, true),
    Limit::at_most("Cr", "wt%", 3.5, true),
    Limit::at_most("Mo", "wt%", 1.0, true),
];

/// Validity warnings for [`ms_steven_haynes`] (ranges from memory), negative
/// contents.
pub fn check_steven_haynes(comp: &Composition) -> Vec<String> {
    check_composition("Steven & Haynes (1956)", comp, &STEVEN_HAYNES_LIMITS)
}

/// Volume fraction of martensite after quenching to `temperature` T, after
/// Koistinen & Marburger (1959), Acta Metall. 7:59:
///
/// f = 1 − exp[−0.011·(Ms − T)] for T ≤ Ms, and 0 above Ms.
///
/// Temperatures in °C. No validity range is documented in the reference.
/// From memory (unchecked): the rate 0.011 K⁻¹ was fitted on plain-carbon
/// steels, and other rates are reported for more highly alloyed steels.
pub fn martensite_fraction_km(ms: f64, temperature: f64) -> f64 {
    if temperature >= ms {
        0.0
    } else {
        1.0 - (-KM_RATE * (ms - temperature)).exp_fixed()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    /// Ex4 of the reference: C 0.20, Mn 1.40, Si 0.30, Ni 0.10, Cr 0.10,
    /// Mo 0.05, V 0.05, Cu 0.15.
    fn ex4() -> Composition {
        Composition {
            c: 0.20,
            mn: 1.40,
            si: 0.30,
            ni: 0.10,
            cr: 0.10,
            mo: 0.05,
            v: 0.05,
            cu: 0.15,
            ..Composition::default()
        }
    }

    #[test]
    fn ex4_transformation_temperatures() {
        let comp = ex4();
        // 408.485 °C — reference, Ex4 Ms Andrews (1965) [S].
        assert_abs_diff_eq!(ms_andrews(&comp), 408.485, epsilon = 5e-4);
        // 415.550 °C — reference, Ex4 Ms Steven & Haynes (1956) [S].
        assert_abs_diff_eq!(ms_steven_haynes(&comp), 415.550, epsilon = 5e-4);
        // 716.750 °C — reference, Ex4 Ac1 Andrews (1965) [S].
        assert_abs_diff_eq!(ac1_andrews(&comp), 716.750, epsilon = 5e-4);
        // 795.881 °C — reference, Ex4 Ac3 core − 30Mn, Andrews (1965) [S].
        assert_abs_diff_eq!(ac3_andrews(&comp), 795.881, epsilon = 5e-4);
    }

    #[test]
    fn second_ms_check() {
        let comp = Composition {
            c: 0.40,
            mn: 0.80,
            cr: 0.85,
            ..Composition::default()
        };
        // 335.195 °C — reference, Ms Andrews (1965), C 0.40, Mn 0.80, Cr 0.85 [S].
        assert_abs_diff_eq!(ms_andrews(&comp), 335.195, epsilon = 5e-4);
    }

    #[test]
    fn koistinen_marburger() {
        // 0.85412 — reference, Koistinen & Marburger (1959), Ms 200 → 25 °C [S].
        assert_abs_diff_eq!(martensite_fraction_km(200.0, 25.0), 0.85412, epsilon = 5e-6);
        // No martensite at or above Ms — definition of Ms, Koistinen & Marburger [S].
        assert_abs_diff_eq!(martensite_fraction_km(200.0, 200.0), 0.0, epsilon = 1e-12);
        assert_abs_diff_eq!(martensite_fraction_km(200.0, 300.0), 0.0, epsilon = 1e-12);
        assert!(martensite_fraction_km(200.0, -196.0) < 1.0);
    }

    #[test]
    fn validity_warnings() {
        assert!(check_andrews(&ex4()).is_empty());
        let high_c = Composition {
            c: 0.8,
            mn: 0.7,
            ..Composition::default()
        };
        let w = check_andrews(&high_c);
        assert_eq!(w.len(), 1);
        assert!(w[0].contains("C = 0.8 wt%") && w[0].contains("< 0.6 wt%"));
        assert!(w[0].contains("published range"));
        // C = 0.6 itself is outside C < 0.6.
        let at = Composition {
            c: 0.6,
            ..Composition::default()
        };
        assert_eq!(check_andrews(&at).len(), 1);
        // Steven & Haynes: Ex4 inside; weld metal with C 0.07 outside (from memory).
        assert!(check_steven_haynes(&ex4()).is_empty());
        let weld = Composition {
            c: 0.07,
            mn: 1.5,
            ..Composition::default()
        };
        let w = check_steven_haynes(&weld);
        assert_eq!(w.len(), 1);
        assert!(w[0].contains("from memory"));
    }

    #[test]
    fn ac3_negative_carbon_is_nan() {
        let comp = Composition {
            c: -0.1,
            ..Composition::default()
        };
        assert!(ac3_andrews(&comp).is_nan());
        assert!(check_andrews(&comp)[0].contains("negative"));
    }
}
