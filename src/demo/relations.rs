//! Published relations used by the demo-data generator, each with its source.
//!
//! These are implemented locally so the generator depends on nothing else in the
//! crate. Status tags follow the project's reference sheet of trade formulas:
//! **\[S\]** agrees across several independent secondary sources quoting the original;
//! **\[M\]** from memory of the literature, provisional.

use crate::fixedmath::FixedMath;

/// Cooling time t8/5 (s) from 800 °C to 500 °C for three-dimensional (thick-plate)
/// heat flow, EN 1011-2 Annex D \[S\]:
///
/// t8/5 = (6700 − 5·T0)·Q·[1/(500 − T0) − 1/(800 − T0)]·F3
///
/// `heat_input_kj_mm` is Q in kJ/mm, `preheat_c` is the preheat or interpass
/// temperature T0 in °C and `f3` the shape factor (1 for bead on plate, 0.9 for the
/// fill passes of a butt weld; the shape factors themselves are tagged \[M\] in the
/// reference). Check (F3 = 1): Q 1.0, T0 20 → 5.2885 s.
pub fn cooling_time_t85_3d(heat_input_kj_mm: f64, preheat_c: f64, f3: f64) -> f64 {
    let t0 = preheat_c;
    (6700.0 - 5.0 * t0) * heat_input_kj_mm * (1.0 / (500.0 - t0) - 1.0 / (800.0 - t0)) * f3
}

/// Shape factor F3 for the fill passes of a butt weld, EN 1011-2 Annex D
/// (value tagged \[M\] in the reference sheet). The generator assumes every weld in the
/// archive is a fill pass in thick plate, so three-dimensional heat flow governs.
pub const F3_FILL_PASS: f64 = 0.9;

/// Hyperbolic-tangent Charpy transition curve, the form standardised in ASTM E2215
/// (Oldfield 1975, ASTM Standardization News 3(11):24) \[S\]:
///
/// KV(T) = A + B·tanh((T − T0)/C), A = (US + LS)/2, B = (US − LS)/2.
///
/// `lower_j` and `upper_j` are the lower and upper shelves (J), `t0_c` the
/// mid-transition temperature (°C) and `width_c` the half-width C (°C).
/// Check: LS 3, US 200, T0 −20, C 25 → KV(0) = 166.908 J, KV(−40) = 36.092 J.
pub fn transition_curve(temp_c: f64, lower_j: f64, upper_j: f64, t0_c: f64, width_c: f64) -> f64 {
    let a = 0.5 * (upper_j + lower_j);
    let b = 0.5 * (upper_j - lower_j);
    a + b * ((temp_c - t0_c) / width_c).tanh_fixed()
}

/// Slope dKV/dT (J/°C) of [`transition_curve`]: (B/C)·sech²((T − T0)/C).
/// Follows by differentiating the ASTM E2215 form \[S\].
pub fn transition_slope(temp_c: f64, lower_j: f64, upper_j: f64, t0_c: f64, width_c: f64) -> f64 {
    let b = 0.5 * (upper_j - lower_j);
    let th = ((temp_c - t0_c) / width_c).tanh_fixed();
    b / width_c * (1.0 - th * th)
}

/// Inverse of [`transition_curve`]: the temperature (°C) at which the curve reaches
/// `energy_j`, T_E = T0 + C·atanh((E − A)/B), defined only for LS < E < US \[S\].
/// Returns `None` outside that open interval.
/// Check: LS 3, US 200, T0 −20, C 25 → T27J = −44.691 °C, T40J = −38.303 °C.
pub fn temperature_at_energy(
    energy_j: f64,
    lower_j: f64,
    upper_j: f64,
    t0_c: f64,
    width_c: f64,
) -> Option<f64> {
    if !(energy_j > lower_j && energy_j < upper_j) {
        return None;
    }
    let a = 0.5 * (upper_j + lower_j);
    let b = 0.5 * (upper_j - lower_j);
    Some(t0_c + width_c * ((energy_j - a) / b).atanh())
}

/// Yield strength (MPa) of ferrite–pearlite steels, Pickering & Gladman
/// (Pickering 1978, *Physical Metallurgy and the Design of Steels*) —
/// **\[M\] from memory of the literature, provisional**:
///
/// yield = 53.9 + 32.3·Mn + 83.2·Si + 354·√N_free + 17.4·d^−½
///
/// Mn, Si and free nitrogen `n_free_wt` in wt%, ferrite grain size `d_mm` in mm.
/// Check (value from memory): Mn 1, Si 0.3, N_free 0.005, d 0.010 mm → 310.19 MPa.
pub fn pickering_yield_mpa(mn_wt: f64, si_wt: f64, n_free_wt: f64, d_mm: f64) -> f64 {
    53.9 + 32.3 * mn_wt + 83.2 * si_wt + 354.0 * n_free_wt.max(0.0).sqrt() + 17.4 / d_mm.sqrt()
}

/// Tensile strength (MPa) of ferrite–pearlite steels, Pickering & Gladman
/// (Pickering 1978) — **\[M\] from memory of the literature, provisional**:
///
/// UTS = 294 + 27.7·Mn + 83.2·Si + 3.85·(% pearlite) + 7.7·d^−½
///
/// Check (value from memory): Mn 1, Si 0.3, 20 % pearlite, d 0.010 mm → 500.66 MPa.
pub fn pickering_uts_mpa(mn_wt: f64, si_wt: f64, pearlite_pct: f64, d_mm: f64) -> f64 {
    294.0 + 27.7 * mn_wt + 83.2 * si_wt + 3.85 * pearlite_pct + 7.7 / d_mm.sqrt()
}
