//! The generator's true (noise-free) properties of a weld metal and its noise model.
//!
//! The published parts are the Pickering–Gladman strength terms (\[M\], from memory),
//! the EN 1011-2 cooling time (\[S\]) and the ASTM E2215 tanh transition curve (\[S\]),
//! all in [`super::relations`]. Every other coefficient here is **invented** for the
//! fictional Fellhaven scenario: chosen to be physically sensible in sign and size,
//! not fitted to or taken from any test results.

use crate::fixedmath::FixedMath;
use rand::Rng;
use rand_distr::{Distribution, LogNormal, Normal};

use super::relations::{
    cooling_time_t85_3d, pickering_uts_mpa, pickering_yield_mpa, transition_curve,
    transition_slope, F3_FILL_PASS,
};

/// Names of the input columns, in the order of [`WeldInputs::to_row`].
pub const INPUT_COLUMNS: [&str; 16] = [
    "c_wt",
    "si_wt",
    "mn_wt",
    "ni_wt",
    "cr_wt",
    "mo_wt",
    "cu_wt",
    "co_wt",
    "ti_ppm",
    "b_ppm",
    "o_ppm",
    "n_ppm",
    "heat_input_kj_mm",
    "interpass_temp_c",
    "pwht_temp_c",
    "test_temp_c",
];

/// Names of the measured target columns, in the order of [`Observed::to_row`].
pub const TARGET_COLUMNS: [&str; 4] = ["yield_mpa", "uts_mpa", "elongation_pct", "charpy_j"];

/// Inputs of one weld-metal test record: composition, welding procedure and the
/// Charpy test temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WeldInputs {
    /// Carbon, wt%.
    pub c_wt: f64,
    /// Silicon, wt%.
    pub si_wt: f64,
    /// Manganese, wt%.
    pub mn_wt: f64,
    /// Nickel, wt%.
    pub ni_wt: f64,
    /// Chromium, wt%.
    pub cr_wt: f64,
    /// Molybdenum, wt%.
    pub mo_wt: f64,
    /// Copper, wt%.
    pub cu_wt: f64,
    /// Cobalt trace, wt%. **The planted no-effect input**: the truth functions never
    /// read it, so a model that reports it as significant is fitting noise.
    pub co_wt: f64,
    /// Titanium, ppm by mass.
    pub ti_ppm: f64,
    /// Boron, ppm by mass.
    pub b_ppm: f64,
    /// Oxygen, ppm by mass.
    pub o_ppm: f64,
    /// Nitrogen, ppm by mass.
    pub n_ppm: f64,
    /// Arc heat input, kJ/mm.
    pub heat_input_kj_mm: f64,
    /// Interpass temperature, °C (used as T0 of the cooling-time formula).
    pub interpass_temp_c: f64,
    /// Post-weld heat-treatment temperature, °C; 0 means as-welded.
    pub pwht_temp_c: f64,
    /// Temperature of the Charpy test, °C.
    pub test_temp_c: f64,
}

impl WeldInputs {
    /// The inputs as a row in the order of [`INPUT_COLUMNS`].
    pub fn to_row(&self) -> Vec<f64> {
        vec![
            self.c_wt,
            self.si_wt,
            self.mn_wt,
            self.ni_wt,
            self.cr_wt,
            self.mo_wt,
            self.cu_wt,
            self.co_wt,
            self.ti_ppm,
            self.b_ppm,
            self.o_ppm,
            self.n_ppm,
            self.heat_input_kj_mm,
            self.interpass_temp_c,
            self.pwht_temp_c,
            self.test_temp_c,
        ]
    }

    /// Reads the inputs from the first 16 values of a row in the order of
    /// [`INPUT_COLUMNS`]; `None` if the row is shorter.
    pub fn from_row(row: &[f64]) -> Option<Self> {
        if row.len() < INPUT_COLUMNS.len() {
            return None;
        }
        Some(Self {
            c_wt: row[0],
            si_wt: row[1],
            mn_wt: row[2],
            ni_wt: row[3],
            cr_wt: row[4],
            mo_wt: row[5],
            cu_wt: row[6],
            co_wt: row[7],
            ti_ppm: row[8],
            b_ppm: row[9],
            o_ppm: row[10],
            n_ppm: row[11],
            heat_input_kj_mm: row[12],
            interpass_temp_c: row[13],
            pwht_temp_c: row[14],
            test_temp_c: row[15],
        })
    }
}

/// The generator's truth for one set of inputs: noise-free property values, the
/// standard deviations of the noise it adds, and the internal quantities behind them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrueProperties {
    /// True 0.2 % proof (yield) strength, MPa.
    pub yield_mpa: f64,
    /// True tensile strength, MPa. Always above `yield_mpa`.
    pub uts_mpa: f64,
    /// True elongation after fracture, %.
    pub elongation_pct: f64,
    /// True mean Charpy V-notch energy at the test temperature, J.
    pub charpy_j: f64,
    /// Standard deviation of the yield noise, MPa (2 % CV, invented level in line
    /// with the reference's tensile reproducibility).
    pub yield_sd_mpa: f64,
    /// Standard deviation of the UTS noise, MPa (2 % CV).
    pub uts_sd_mpa: f64,
    /// Standard deviation of the elongation noise, % (6 % CV).
    pub elongation_sd_pct: f64,
    /// Standard deviation of the Charpy noise, J: a floor plus a term that grows
    /// with the slope of the transition curve (see [`charpy_noise_sd`]).
    pub charpy_sd_j: f64,
    /// Cooling time t8/5, s (EN 1011-2 Annex D, 3-D, F3 = 0.9).
    pub t85_s: f64,
    /// Invented acicular-ferrite volume fraction, 0–0.85.
    pub acicular_fraction: f64,
    /// Invented effective ferrite grain size, mm.
    pub grain_size_mm: f64,
    /// Lower shelf of the Charpy curve, J (invented relation).
    pub lower_shelf_j: f64,
    /// Upper shelf of the Charpy curve, J (invented relation).
    pub upper_shelf_j: f64,
    /// Mid-transition temperature T0 of the Charpy curve, °C (invented relation).
    pub t0_c: f64,
    /// Half-width C of the Charpy transition, °C (invented relation, 15–30 °C).
    pub width_c: f64,
}

/// One measured record: the true values plus noise, rounded as a test house reports.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Observed {
    /// Measured yield strength, MPa, to 1 MPa.
    pub yield_mpa: f64,
    /// Measured tensile strength, MPa, to 1 MPa.
    pub uts_mpa: f64,
    /// Measured elongation, %, to 0.5 %.
    pub elongation_pct: f64,
    /// Measured Charpy energy (mean of a specimen set), J, to 0.5 J.
    pub charpy_j: f64,
}

impl Observed {
    /// The values as a row in the order of [`TARGET_COLUMNS`].
    pub fn to_row(&self) -> Vec<f64> {
        vec![
            self.yield_mpa,
            self.uts_mpa,
            self.elongation_pct,
            self.charpy_j,
        ]
    }
}

/// Coefficient of variation of the tensile noise (yield and UTS), invented level
/// consistent with the reference's reproducibility figures.
pub const TENSILE_CV: f64 = 0.02;
/// Coefficient of variation of the elongation noise, invented level.
pub const ELONGATION_CV: f64 = 0.06;
/// Floor of the Charpy noise sd, J (invented).
pub const CHARPY_SD_FLOOR_J: f64 = 2.0;
/// Relative floor of the Charpy noise sd, fraction of the mean (invented; the
/// reference quotes 2–4 % CV for homogeneous verification steel).
pub const CHARPY_SD_REL: f64 = 0.03;
/// Temperature-equivalent scatter of the Charpy test, °C (invented): the sd gains
/// |dKV/dT| times this, so scatter peaks in the transition region.
pub const CHARPY_SD_TEMP_C: f64 = 6.0;

fn sigmoid(x: f64) -> f64 {
    1.0 / (1.0 + (-x).exp_fixed())
}

/// Smooth version of max(x, 0) with scale `s`: s·ln(1 + exp(x/s)).
fn softplus(x: f64, s: f64) -> f64 {
    let z = x / s;
    if z > 30.0 {
        x
    } else {
        s * z.exp_fixed().ln_1p_fixed()
    }
}

/// Free (not Ti-bound) nitrogen, wt%. Invented: titanium ties up nitrogen as TiN
/// with a mass ratio 14/48 ≈ 0.29, of which half the Ti is taken to be available
/// (the rest goes to oxides); a smooth floor of about 5 ppm remains free.
pub fn free_nitrogen_wt(n_ppm: f64, ti_ppm: f64) -> f64 {
    (5.0 + softplus(n_ppm - 0.146 * ti_ppm - 5.0, 10.0)) * 1e-4
}

/// Invented acicular-ferrite fraction (0–0.85). It rises with titanium (saturating
/// near 250 ppm), with boron when titanium protects it, with hardenability (Mn, Ni,
/// Mo, Cr), peaks for oxygen near 330 ppm (enough inclusions to nucleate on, not so
/// many that they coarsen) and falls with slower cooling (longer t8/5).
pub fn acicular_fraction(x: &WeldInputs, t85_s: f64) -> f64 {
    let ti_sat = 1.0 - (-x.ti_ppm.max(0.0) / 120.0).exp_fixed();
    let b_sat = 1.0 - (-x.b_ppm.max(0.0) / 15.0).exp_fixed();
    let o_window = (-((x.o_ppm - 330.0) / 180.0).powi(2)).exp_fixed();
    let z = -1.2
        + 2.4 * ti_sat * o_window
        + 1.0 * b_sat * ti_sat
        + 0.9 * (x.mn_wt - 1.3)
        + 0.3 * x.ni_wt
        + 1.5 * x.mo_wt
        + 0.6 * x.cr_wt
        - 0.06 * (t85_s - 10.0);
    0.85 * sigmoid(z)
}

/// Invented effective ferrite grain size (mm): coarser with longer t8/5, refined by
/// acicular ferrite. Gives roughly 3 µm (fast cooling, much acicular ferrite) to
/// 18 µm (slow cooling, little acicular ferrite).
pub fn grain_size_mm(t85_s: f64, acicular: f64) -> f64 {
    (0.0025 + 0.00045 * t85_s.max(0.0)) * (1.0 - 0.45 * acicular)
}

/// Invented tempering index of the post-weld heat treatment: 0 as-welded
/// (`pwht_temp_c` = 0), 0.8 at 580 °C, 1.2 at 620 °C, capped at 1.5.
pub fn pwht_index(pwht_temp_c: f64) -> f64 {
    ((pwht_temp_c - 500.0) / 100.0).clamp(0.0, 1.5)
}

/// Invented smooth cap on the yield/tensile ratio: ratios up to 0.88 pass unchanged,
/// higher ones bend towards 0.96, so yield stays below UTS for any inputs.
fn cap_yield_ratio(ratio: f64) -> f64 {
    if ratio <= 0.88 {
        ratio
    } else {
        0.88 + 0.08 * ((ratio - 0.88) / 0.08).tanh_fixed()
    }
}

/// Standard deviation (J) of the Charpy noise for a curve with the given mean and
/// slope. Invented form: max(2 J, 3 % of the mean) + 6 °C · |dKV/dT|.
pub fn charpy_noise_sd(mean_j: f64, slope_j_per_c: f64) -> f64 {
    CHARPY_SD_FLOOR_J.max(CHARPY_SD_REL * mean_j) + CHARPY_SD_TEMP_C * slope_j_per_c.abs()
}

/// The generator's true properties for `x`.
///
/// Strength: Pickering–Gladman linear terms (\[M\], from memory) with their published
/// Mn (32.3 on yield, 27.7 on UTS) and Si (83.2) coefficients, free nitrogen and an
/// invented grain size driven by t8/5; an invented carbon-dependent second-phase
/// percentage stands in for % pearlite; invented additions for C, Ni, Mo, Cr, Cu and
/// acicular ferrite, and an invented PWHT softening. Elongation falls with UTS
/// (invented). Charpy: the ASTM E2215 tanh curve (\[S\]) with invented shelves,
/// mid-transition temperature and width. `co_wt` is never read.
pub fn truth(x: &WeldInputs) -> TrueProperties {
    let t85 = cooling_time_t85_3d(x.heat_input_kj_mm, x.interpass_temp_c, F3_FILL_PASS);
    let af = acicular_fraction(x, t85);
    let d = grain_size_mm(t85, af);
    let n_free = free_nitrogen_wt(x.n_ppm, x.ti_ppm);
    let p = pwht_index(x.pwht_temp_c);
    // Invented: carbide/M-A second phase, standing in for % pearlite.
    let second_phase_pct = 100.0 * x.c_wt.max(0.0);

    let uts = pickering_uts_mpa(x.mn_wt, x.si_wt, second_phase_pct, d)
        + 35.0 * x.ni_wt
        + 120.0 * x.mo_wt
        + 80.0 * x.cr_wt
        + 50.0 * x.cu_wt
        + 40.0 * af
        - 14.0 * p;
    let yield_raw = pickering_yield_mpa(x.mn_wt, x.si_wt, n_free, d)
        + 350.0 * x.c_wt
        + 22.0 * x.ni_wt
        + 60.0 * x.mo_wt
        + 35.0 * x.cr_wt
        + 40.0 * x.cu_wt
        + 95.0 * af
        - 32.0 * p;
    let yield_mpa = uts * cap_yield_ratio(yield_raw / uts);

    let elongation = (46.0 - 0.03 * uts + 1.5 * p - 0.005 * (x.o_ppm - 400.0)).max(5.0);

    let lower = 3.0 + 1.2 * x.ni_wt.max(0.0) + 2.0 * af;
    let upper_raw =
        195.0 - 0.26 * (x.o_ppm - 200.0) + 6.0 * x.ni_wt - 150.0 * (x.c_wt - 0.04) + 5.0 * p;
    let upper = lower + 20.0 + softplus(upper_raw - lower - 20.0, 10.0);
    let t0 = -28.0 + 0.10 * (yield_mpa - 460.0) - 8.0 * x.ni_wt - 55.0 * (af - 0.4)
        + 0.06 * (x.o_ppm - 350.0)
        + 0.7 * (t85 - 12.0)
        + 300.0 * (n_free.sqrt() - 0.07)
        - 4.0 * p;
    let width = 15.0 + 15.0 * sigmoid(-0.5 + 0.5 * x.ni_wt + 0.04 * (t85 - 12.0));
    let kv = transition_curve(x.test_temp_c, lower, upper, t0, width);
    let slope = transition_slope(x.test_temp_c, lower, upper, t0, width);

    TrueProperties {
        yield_mpa,
        uts_mpa: uts,
        elongation_pct: elongation,
        charpy_j: kv,
        yield_sd_mpa: TENSILE_CV * yield_mpa,
        uts_sd_mpa: TENSILE_CV * uts,
        elongation_sd_pct: ELONGATION_CV * elongation,
        charpy_sd_j: charpy_noise_sd(kv, slope),
        t85_s: t85,
        acicular_fraction: af,
        grain_size_mm: d,
        lower_shelf_j: lower,
        upper_shelf_j: upper,
        t0_c: t0,
        width_c: width,
    }
}

/// Log-normal draw with the given mean and sd (both > 0), so the draw is positive
/// and its mean and sd are exactly those asked for.
fn lognormal_mean_sd<R: Rng + ?Sized>(rng: &mut R, mean: f64, sd: f64) -> f64 {
    if sd <= 0.0 {
        return mean;
    }
    let s2 = (1.0 + (sd / mean).powi(2)).ln_fixed();
    let mu = mean.ln_fixed() - 0.5 * s2;
    LogNormal::new(mu, s2.sqrt())
        .map(|d| d.sample(rng))
        .unwrap_or(mean)
}

fn normal<R: Rng + ?Sized>(rng: &mut R, mean: f64, sd: f64) -> f64 {
    if sd <= 0.0 {
        return mean;
    }
    Normal::new(mean, sd).map(|d| d.sample(rng)).unwrap_or(mean)
}

fn round_to(x: f64, step: f64) -> f64 {
    (x / step).round() * step
}

/// Draws one measured record from the truth, with the noise sds multiplied by
/// `noise_scale` (1 for the documented levels, 0 for noise-free rounded truth).
///
/// - Yield and UTS: independent normal draws (2 % CV); the pair is redrawn in the
///   rare case that measured yield would not be below measured UTS. Rounded to 1 MPa.
/// - Elongation: log-normal with the true mean and 6 % CV (so it is positive),
///   redrawn if it would reach 100 %. Rounded to 0.5 %.
/// - Charpy: log-normal with the true mean and the sd of [`charpy_noise_sd`], so the
///   energy is positive and its mean is the true mean; redrawn if it would round to
///   0 J. Rounded to 0.5 J.
pub fn observe<R: Rng + ?Sized>(t: &TrueProperties, rng: &mut R, noise_scale: f64) -> Observed {
    let k = noise_scale.max(0.0);
    let (yield_mpa, uts_mpa) = loop {
        let y = round_to(normal(rng, t.yield_mpa, k * t.yield_sd_mpa), 1.0);
        let u = round_to(normal(rng, t.uts_mpa, k * t.uts_sd_mpa), 1.0);
        if y < u {
            break (y, u);
        }
    };
    let elongation_pct = loop {
        let e = round_to(
            lognormal_mean_sd(rng, t.elongation_pct, k * t.elongation_sd_pct),
            0.5,
        );
        if e > 0.0 && e < 100.0 {
            break e;
        }
    };
    let charpy_j = loop {
        let c = round_to(lognormal_mean_sd(rng, t.charpy_j, k * t.charpy_sd_j), 0.5);
        if c > 0.0 {
            break c;
        }
        if t.charpy_j < 0.25 {
            // Only reachable for inputs far outside any sensible range.
            break 0.5;
        }
    };
    Observed {
        yield_mpa,
        uts_mpa,
        elongation_pct,
        charpy_j,
    }
}
