//! Kriging of the committee's residuals, on invented Charpy-like data in
//! which each heat carries its own offset.
//!
//! Each heat has a composition (C and Mn, wt%) that sets its transition
//! temperature, and an offset of its own that the composition does not
//! explain (a heat-to-heat effect such as an unrecorded trace element —
//! common practice, no source). Each heat is tested at several
//! temperatures. The mean is the hyperbolic-tangent transition curve of
//! ASTM E2215 (shared reference sheet trade-formulas.md, with the shelves
//! 3 J and 200 J, C = 25 °C). Checks, against the generator's own truth:
//!
//! - at further temperatures of heats already in the training data (the
//!   QA engineer's case: some pieces tested, the rest pending), the kriged
//!   committee is clearly more accurate than the committee alone, and its
//!   ±2 sd band covers about 95 % of the rows;
//! - for heats it has never seen, kriging costs little: the error is no
//!   more than 10 % above the committee's alone, and the ±2 sd band covers
//!   at least 85 % (it narrows there: see the note at the check);
//! - `--kriging auto` decides on the held-out part; `off` carries no process;
//! - through the real binary, `train --kriging on|off` writes a model with
//!   and without the process, `train` says so, and `predict` reports the
//!   split of the sd into noise and model parts with the process in,
//!   `explain` describes the process; a model file whose process is
//!   damaged is refused.

use mettle::fixedmath::FixedMath;
mod common;

use common::{stderr, Workdir};
use mettle::committee::{CommitteeParams, KrigingMode, NoiseMode};
use mettle::data::Table;
use mettle::model::TrainSpec;
use mettle::observer::Silent;
use mettle::Model;
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;

const LOWER_SHELF: f64 = 3.0;
const UPPER_SHELF: f64 = 200.0;
const C: f64 = 25.0;
/// sd of the heat's own offset (J) and of the test scatter (J).
const HEAT_SD: f64 = 12.0;
const TEST_SD: f64 = 3.0;

struct Heat {
    c_wt: f64,
    mn_wt: f64,
    offset: f64,
}

fn heats(n: usize, rng: &mut Xoshiro256PlusPlus) -> Vec<Heat> {
    let z = Normal::new(0.0, HEAT_SD).expect("sd");
    (0..n)
        .map(|_| Heat {
            c_wt: rng.random_range(0.05..0.20),
            mn_wt: rng.random_range(0.8..1.8),
            offset: z.sample(rng),
        })
        .collect()
}

/// Expected energy of a heat at `t` °C without its offset.
fn curve(h: &Heat, t: f64) -> f64 {
    let t0 = -40.0 + 300.0 * (h.c_wt - 0.05) - 25.0 * (h.mn_wt - 0.8);
    LOWER_SHELF + 0.5 * (UPPER_SHELF - LOWER_SHELF) * (1.0 + ((t - t0) / C).tanh_fixed())
}

fn table(name: &str, hs: &[Heat], temps: &[f64], rng: &mut Xoshiro256PlusPlus) -> Table {
    let e = Normal::new(0.0, TEST_SD).expect("sd");
    let (mut c, mut mn, mut tt, mut y) = (vec![], vec![], vec![], vec![]);
    for h in hs {
        for &t in temps {
            c.push(h.c_wt);
            mn.push(h.mn_wt);
            tt.push(t);
            y.push(curve(h, t) + h.offset + e.sample(rng));
        }
    }
    Table::from_columns(
        name,
        vec![
            ("c_wt".into(), c),
            ("mn_wt".into(), mn),
            ("test_temp_c".into(), tt),
            ("charpy_j".into(), y),
        ],
    )
    .expect("table")
}

fn train(t: &Table, kriging: KrigingMode) -> Model {
    let mut spec = TrainSpec::new(&["charpy_j"]);
    spec.auto_log_inputs = false;
    spec.params = CommitteeParams::default()
        .hidden(1, 4)
        .restarts(2)
        .seed(3)
        .noise(NoiseMode::Constant)
        .kriging(kriging);
    Model::train(t, &spec, &Silent).expect("training succeeds")
}

/// RMSE and the share of rows inside mean ± 2 sd.
fn score(model: &Model, t: &Table) -> (f64, f64) {
    let pred = model.predict(t).expect("prediction");
    let y = t.numeric("charpy_j").expect("target");
    let n = y.len() as f64;
    let mut se = 0.0;
    let mut inside = 0.0;
    for (p, y) in pred.iter().zip(&y) {
        let e = &p.estimates[0];
        se += (y - e.mean).powi(2);
        if (y - e.mean).abs() <= 2.0 * e.sd {
            inside += 1.0;
        }
    }
    ((se / n).sqrt(), inside / n)
}

#[test]
fn kriging_follows_known_heats_and_leaves_new_heats_to_the_committee() {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(17);
    let known = heats(60, &mut rng);
    let new = heats(120, &mut rng);
    let train_temps = [-80.0, -50.0, -20.0, 10.0, 40.0];
    let pending_temps = [-65.0, -35.0, -5.0, 25.0];
    let tr = table("train", &known, &train_temps, &mut rng);
    let pending = table("pending", &known, &pending_temps, &mut rng);
    let unseen = table("unseen", &new, &train_temps, &mut rng);

    let alone = train(&tr, KrigingMode::Off);
    assert!(alone.targets[0].committee.kriging.is_none());
    let kriged = train(&tr, KrigingMode::On);
    let process = kriged.targets[0]
        .committee
        .kriging
        .as_ref()
        .expect("a process");
    assert_eq!(process.x.nrows(), tr.n_rows());
    assert!(kriged.targets[0].committee.selection.kriging.used);

    let (rmse_alone, _) = score(&alone, &pending);
    let (rmse_kriged, cov95_kriged) = score(&kriged, &pending);
    assert!(
        rmse_kriged < 0.7 * rmse_alone,
        "pending tests of known heats: RMSE {rmse_kriged:.2} kriged vs {rmse_alone:.2} alone"
    );
    // 240 rows: 3 binomial standard errors of a 95 % share are 0.042
    assert!(
        (0.90..=0.995).contains(&cov95_kriged),
        "pending tests of known heats: ±2 sd covers {cov95_kriged:.3}"
    );

    let (rmse_alone_new, _) = score(&alone, &unseen);
    let (rmse_kriged_new, cov95_new) = score(&kriged, &unseen);
    assert!(
        rmse_kriged_new < 1.1 * rmse_alone_new,
        "new heats: RMSE {rmse_kriged_new:.2} kriged vs {rmse_alone_new:.2} alone"
    );
    // 600 rows of 120 heats whose offsets are shared within a heat. The
    // process narrows the band at new heats that lie close to trained ones
    // (their offsets are in truth independent; measured when this test was
    // written: 0.865 kriged, 0.922 alone; docs/method.md §6a): allow no
    // more than 0.10 below the nominal 0.95
    assert!(
        (0.85..=1.0).contains(&cov95_new),
        "new heats: ±2 sd covers {cov95_new:.3}"
    );

    // auto decides on the held-out part and records both numbers
    let auto = train(&tr, KrigingMode::Auto);
    let sel = &auto.targets[0].committee.selection.kriging;
    let (k, c) = (
        sel.kriging_nlpd.expect("tried"),
        sel.committee_nlpd.expect("scored"),
    );
    assert_eq!(
        sel.used,
        k < c,
        "auto keeps the process exactly when it lowers the held-out NLPD"
    );
    assert_eq!(auto.targets[0].committee.kriging.is_some(), sel.used);
}

/// The same heats as a CSV file for the binary.
fn csv_of(t: &Table) -> String {
    let names = ["c_wt", "mn_wt", "test_temp_c", "charpy_j"];
    let cols: Vec<Vec<f64>> = names
        .iter()
        .map(|n| t.numeric(n).expect("column"))
        .collect();
    let mut out = names.join(",") + "\n";
    for i in 0..t.n_rows() {
        let row: Vec<String> = cols.iter().map(|c| format!("{}", c[i])).collect();
        out += &(row.join(",") + "\n");
    }
    out
}

#[test]
fn train_kriging_on_and_off_through_the_binary() {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(23);
    let known = heats(40, &mut rng);
    let tr = table(
        "train",
        &known,
        &[-80.0, -50.0, -20.0, 10.0, 40.0],
        &mut rng,
    );
    let pending = table("pending", &known[..5], &[-35.0], &mut rng);
    let w = Workdir::new();
    w.write("heats.csv", csv_of(&tr));
    w.write("pending.csv", csv_of(&pending));
    let small = [
        "--target",
        "charpy_j",
        "--hidden",
        "1..3",
        "--restarts",
        "2",
        "--seed",
        "2",
    ];
    let mut on = vec![
        "train",
        "--data",
        "heats.csv",
        "--out",
        "on.json",
        "--kriging",
        "on",
    ];
    on.extend(small);
    let out = w.ok(&on);
    assert!(
        stderr(&out).contains("residuals kriged over 200 rows"),
        "{}",
        stderr(&out)
    );
    let mut off = vec![
        "train",
        "--data",
        "heats.csv",
        "--out",
        "off.json",
        "--kriging",
        "off",
    ];
    off.extend(small);
    w.ok(&off);
    let model =
        |f: &str| -> serde_json::Value { serde_json::from_slice(&w.read(f)).expect("model JSON") };
    let (m_on, m_off) = (model("on.json"), model("off.json"));
    let c_on = &m_on["targets"][0]["committee"];
    assert_eq!(c_on["kriging"]["x"].as_array().expect("rows").len(), 200);
    assert_eq!(
        c_on["kriging"]["length_scales"]
            .as_array()
            .expect("ℓ")
            .len(),
        3
    );
    assert_eq!(c_on["selection"]["kriging"]["requested"], "on");
    assert_eq!(c_on["selection"]["kriging"]["used"], true);
    assert!(m_off["targets"][0]["committee"].get("kriging").is_none());
    assert_eq!(
        m_off["targets"][0]["committee"]["selection"]["kriging"]["used"],
        false
    );

    let estimates = |f: &str| -> Vec<serde_json::Value> {
        let out = w.ok(&[
            "predict",
            "--model",
            f,
            "--input",
            "pending.csv",
            "--format",
            "json",
        ]);
        common::predict_rows(&out.stdout)
    };
    let truth = pending.numeric("charpy_j").expect("truth");
    let (mut err_on, mut err_off) = (0.0, 0.0);
    for (i, (a, b)) in estimates("on.json")
        .iter()
        .zip(estimates("off.json"))
        .enumerate()
    {
        let sd = a["sd"].as_f64().expect("sd");
        let noise = a["noise_sd"].as_f64().expect("noise_sd");
        let model_sd = a["model_sd"].as_f64().expect("model_sd");
        // the two parts make up the whole
        assert!(
            (sd * sd - noise * noise - model_sd * model_sd).abs() < 1e-6 * sd * sd,
            "row {i}: {a}"
        );
        err_on += (a["mean"].as_f64().expect("mean") - truth[i]).powi(2);
        err_off += (b["mean"].as_f64().expect("mean") - truth[i]).powi(2);
    }
    // five pending tests of known heats: the process follows their offsets
    assert!(
        err_on < err_off,
        "squared error {err_on:.1} kriged vs {err_off:.1} alone"
    );
}
