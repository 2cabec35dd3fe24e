//! Where the invented archive's inputs come from: the ranges, the four clusters of
//! consumables, the deliberate hole, and the samplers for screening candidates and
//! new heats. Every cluster, weight and range here is **invented** for the fictional
//! Fellhaven scenario.

use rand::Rng;

use super::truth::WeldInputs;

/// Range of one input over the training archive (invented, realistic for C-Mn-Ni
/// ferritic weld metal).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InputRange {
    /// Column name, as in [`super::INPUT_COLUMNS`].
    pub name: &'static str,
    /// Lowest value in the training archive.
    pub min: f64,
    /// Highest value in the training archive.
    pub max: f64,
}

const fn range(name: &'static str, min: f64, max: f64) -> InputRange {
    InputRange { name, min, max }
}

/// Ranges of every input over the training archive, in the order of
/// [`super::INPUT_COLUMNS`]. PWHT is 0 (as-welded) or 580–620 °C. Invented.
pub const TRAINING_RANGES: [InputRange; 16] = [
    range("c_wt", 0.04, 0.12),
    range("si_wt", 0.2, 0.6),
    range("mn_wt", 0.8, 1.8),
    range("ni_wt", 0.0, 3.5),
    range("cr_wt", 0.0, 0.5),
    range("mo_wt", 0.0, 0.5),
    range("cu_wt", 0.0, 0.3),
    range("co_wt", 0.0, 0.05),
    range("ti_ppm", 0.0, 500.0),
    range("b_ppm", 0.0, 50.0),
    range("o_ppm", 200.0, 600.0),
    range("n_ppm", 40.0, 120.0),
    range("heat_input_kj_mm", 0.8, 3.5),
    range("interpass_temp_c", 20.0, 250.0),
    range("pwht_temp_c", 0.0, 620.0),
    range("test_temp_c", -80.0, 20.0),
];

/// Nickel range of the deliberate hole, wt% (invented).
pub const HOLE_NI_WT: (f64, f64) = (1.5, 2.2);
/// Heat input above which the hole lies, kJ/mm (invented).
pub const HOLE_MIN_HEAT_INPUT: f64 = 2.5;

/// True if `x` lies in the deliberate hole of the training archive: Ni 1.5–2.2 wt%
/// together with heat input above 2.5 kJ/mm. No training row lies there.
pub fn in_hole(x: &WeldInputs) -> bool {
    x.ni_wt >= HOLE_NI_WT.0 && x.ni_wt <= HOLE_NI_WT.1 && x.heat_input_kj_mm > HOLE_MIN_HEAT_INPUT
}

/// Names of the inputs of `x` that lie outside [`TRAINING_RANGES`] (empty if none).
/// A PWHT temperature strictly between 0 and 580 °C also counts as outside.
pub fn outside_training_ranges(x: &WeldInputs) -> Vec<&'static str> {
    let row = x.to_row();
    let mut out: Vec<&'static str> = TRAINING_RANGES
        .iter()
        .zip(row.iter())
        .filter(|(r, v)| **v < r.min - 1e-9 || **v > r.max + 1e-9)
        .map(|(r, _)| r.name)
        .collect();
    if x.pwht_temp_c > 0.0 && x.pwht_temp_c < 580.0 {
        out.push("pwht_temp_c");
    }
    out
}

/// One cluster of the invented archive: a family of consumable and procedure.
#[derive(Debug, Clone, Copy)]
struct Cluster {
    weight: f64,
    /// (low, high) for each input except co_wt, pwht and test temperature, in the
    /// order of [`super::INPUT_COLUMNS`] (the co_wt slot is ignored).
    bounds: [(f64, f64); 14],
    pwht_probability: f64,
}

/// The four invented clusters:
/// 1. submerged-arc, low-Ni, high heat input (the bulk of the archive);
/// 2. flux-cored with about 1 % Ni, low heat input, higher oxygen;
/// 3. a 2.5–3.5 % Ni high-toughness consumable, low oxygen;
/// 4. a sparse Mo–Cr-bearing group, Ni up to 2.2 %.
const CLUSTERS: [Cluster; 4] = [
    Cluster {
        weight: 0.42,
        bounds: [
            (0.05, 0.12),
            (0.2, 0.5),
            (1.2, 1.8),
            (0.0, 0.6),
            (0.0, 0.15),
            (0.0, 0.2),
            (0.0, 0.3),
            (0.0, 0.0),
            (20.0, 250.0),
            (0.0, 25.0),
            (300.0, 550.0),
            (50.0, 120.0),
            (2.0, 3.5),
            (100.0, 250.0),
        ],
        pwht_probability: 0.3,
    },
    Cluster {
        weight: 0.30,
        bounds: [
            (0.04, 0.08),
            (0.25, 0.6),
            (0.9, 1.5),
            (0.8, 1.3),
            (0.0, 0.1),
            (0.0, 0.1),
            (0.0, 0.15),
            (0.0, 0.0),
            (200.0, 500.0),
            (15.0, 50.0),
            (420.0, 600.0),
            (40.0, 100.0),
            (0.8, 2.0),
            (20.0, 180.0),
        ],
        pwht_probability: 0.1,
    },
    Cluster {
        weight: 0.20,
        bounds: [
            (0.04, 0.08),
            (0.2, 0.45),
            (0.8, 1.4),
            (2.3, 3.5),
            (0.0, 0.3),
            (0.0, 0.25),
            (0.0, 0.1),
            (0.0, 0.0),
            (100.0, 400.0),
            (0.0, 40.0),
            (200.0, 380.0),
            (40.0, 90.0),
            (0.8, 2.4),
            (20.0, 200.0),
        ],
        pwht_probability: 0.35,
    },
    Cluster {
        weight: 0.08,
        bounds: [
            (0.05, 0.11),
            (0.2, 0.5),
            (1.0, 1.7),
            (0.0, 2.2),
            (0.1, 0.5),
            (0.25, 0.5),
            (0.0, 0.2),
            (0.0, 0.0),
            (50.0, 350.0),
            (0.0, 40.0),
            (250.0, 500.0),
            (50.0, 110.0),
            (0.8, 3.5),
            (80.0, 250.0),
        ],
        pwht_probability: 0.5,
    },
];

/// Charpy test temperatures used by the invented archive, °C. −40 °C (the mine's
/// design temperature) is drawn with probability 0.3, the others evenly.
const TEST_TEMPS_C: [f64; 11] = [
    -80.0, -70.0, -60.0, -50.0, -40.0, -30.0, -20.0, -10.0, 0.0, 10.0, 20.0,
];

/// Rounds to `decimals` decimal places, giving the nearest f64 to the decimal.
fn round_dp(x: f64, decimals: i32) -> f64 {
    let f = 10f64.powi(decimals);
    (x * f).round() / f
}

/// Triangular draw on [lo, hi] (mean of two uniforms): clumped towards the middle,
/// as real consumable batches are.
fn tri<R: Rng + ?Sized>(rng: &mut R, lo: f64, hi: f64) -> f64 {
    if hi <= lo {
        return lo;
    }
    let u = 0.5 * (rng.random::<f64>() + rng.random::<f64>());
    lo + (hi - lo) * u
}

/// Rounds each input to the precision a test certificate reports: C to 0.001 %,
/// other elements to 0.01 % (Co 0.001 %), ppm to 1 ppm, heat input to 0.01 kJ/mm,
/// temperatures to 5 °C (interpass, PWHT) or 1 °C (test).
pub fn round_inputs(x: &WeldInputs) -> WeldInputs {
    WeldInputs {
        c_wt: round_dp(x.c_wt, 3),
        si_wt: round_dp(x.si_wt, 2),
        mn_wt: round_dp(x.mn_wt, 2),
        ni_wt: round_dp(x.ni_wt, 2),
        cr_wt: round_dp(x.cr_wt, 2),
        mo_wt: round_dp(x.mo_wt, 2),
        cu_wt: round_dp(x.cu_wt, 2),
        co_wt: round_dp(x.co_wt, 3),
        ti_ppm: x.ti_ppm.round(),
        b_ppm: x.b_ppm.round(),
        o_ppm: x.o_ppm.round(),
        n_ppm: x.n_ppm.round(),
        heat_input_kj_mm: round_dp(x.heat_input_kj_mm, 2),
        interpass_temp_c: (x.interpass_temp_c / 5.0).round() * 5.0,
        pwht_temp_c: (x.pwht_temp_c / 5.0).round() * 5.0,
        test_temp_c: x.test_temp_c.round(),
    }
}

fn from_bounds<R: Rng + ?Sized>(rng: &mut R, b: &[(f64, f64); 14]) -> [f64; 14] {
    let mut v = [0.0; 14];
    for (vi, (lo, hi)) in v.iter_mut().zip(b.iter()) {
        *vi = tri(rng, *lo, *hi);
    }
    v
}

fn assemble(v: &[f64; 14], co_wt: f64, pwht_temp_c: f64, test_temp_c: f64) -> WeldInputs {
    WeldInputs {
        c_wt: v[0],
        si_wt: v[1],
        mn_wt: v[2],
        ni_wt: v[3],
        cr_wt: v[4],
        mo_wt: v[5],
        cu_wt: v[6],
        co_wt,
        ti_ppm: v[8],
        b_ppm: v[9],
        o_ppm: v[10],
        n_ppm: v[11],
        heat_input_kj_mm: v[12],
        interpass_temp_c: v[13],
        pwht_temp_c,
        test_temp_c,
    }
}

/// Draws the inputs of one archive weld: picks a cluster by weight, draws each input
/// triangularly within the cluster's bounds, draws the cobalt trace uniformly over
/// 0–0.05 wt% independently of everything, rounds, and redraws anything that falls
/// in the hole. `test_temp_c` of `None` draws a temperature from the archive's
/// usual test temperatures.
pub fn sample_archive_weld<R: Rng + ?Sized>(rng: &mut R, test_temp_c: Option<f64>) -> WeldInputs {
    loop {
        let u: f64 = rng.random::<f64>();
        let mut acc = 0.0;
        let mut cluster = &CLUSTERS[CLUSTERS.len() - 1];
        for c in CLUSTERS.iter() {
            acc += c.weight;
            if u < acc {
                cluster = c;
                break;
            }
        }
        let v = from_bounds(rng, &cluster.bounds);
        let co = 0.05 * rng.random::<f64>();
        let pwht = if rng.random::<f64>() < cluster.pwht_probability {
            rng.random_range(580.0..=620.0)
        } else {
            0.0
        };
        let tt = match test_temp_c {
            Some(t) => t,
            None => {
                if rng.random::<f64>() < 0.3 {
                    -40.0
                } else {
                    // Any of the others, evenly (index 4 is −40 °C).
                    let k = rng.random_range(0..TEST_TEMPS_C.len() - 1);
                    TEST_TEMPS_C[if k >= 4 { k + 1 } else { k }]
                }
            }
        };
        let x = round_inputs(&assemble(&v, co, pwht, tt));
        if !in_hole(&x) {
            return x;
        }
    }
}

/// Draws one candidate composition for screening (invented): a variant of an
/// archive weld — the alloy developer starts from a consumable the archive knows —
/// with two or three of C, Mn, Ni, Mo and Cr moved by up to 15 % of their training
/// range, tested at −40 °C; with probability 0.3 one or two elements are pushed
/// outside the training ranges instead. Candidates may fall in the hole or between
/// the archive's clusters — the alloy developer does not know it.
pub fn sample_candidate<R: Rng + ?Sized>(rng: &mut R) -> WeldInputs {
    let base = sample_archive_weld(rng, Some(-40.0));
    let mut v = [
        base.c_wt,
        base.si_wt,
        base.mn_wt,
        base.ni_wt,
        base.cr_wt,
        base.mo_wt,
        base.cu_wt,
        0.0,
        base.ti_ppm,
        base.b_ppm,
        base.o_ppm,
        base.n_ppm,
        base.heat_input_kj_mm,
        base.interpass_temp_c,
    ];
    // (index into v, training low, training high) of the elements varied
    const VARIED: [(usize, f64, f64); 5] = [
        (0, 0.04, 0.12),
        (2, 0.8, 1.8),
        (3, 0.0, 3.5),
        (5, 0.0, 0.5),
        (4, 0.0, 0.5),
    ];
    let n_varied = rng.random_range(2..=3);
    for _ in 0..n_varied {
        let (i, lo, hi) = VARIED[rng.random_range(0..VARIED.len())];
        let step = 0.15 * (hi - lo) * rng.random_range(-1.0..=1.0);
        v[i] = (v[i] + step).clamp(lo, hi);
    }
    // (index into v, low, high) of values beyond the training ranges.
    const OUTSIDE: [(usize, f64, f64); 8] = [
        (3, 3.6, 5.0),      // Ni
        (2, 1.85, 2.3),     // Mn
        (5, 0.55, 0.9),     // Mo
        (0, 0.13, 0.16),    // C
        (10, 120.0, 190.0), // O, low
        (10, 620.0, 750.0), // O, high
        (8, 520.0, 700.0),  // Ti
        (9, 55.0, 80.0),    // B
    ];
    if rng.random::<f64>() < 0.3 {
        let n_out = if rng.random::<f64>() < 0.3 { 2 } else { 1 };
        for _ in 0..n_out {
            let (i, lo, hi) = OUTSIDE[rng.random_range(0..OUTSIDE.len())];
            v[i] = rng.random_range(lo..=hi);
        }
    }
    round_inputs(&assemble(&v, base.co_wt, base.pwht_temp_c, -40.0))
}
