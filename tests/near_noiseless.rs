//! Calibration when the noise is tiny beside the model's own uncertainty
//! (issue 28, "calibration everywhere"; docs/benchmarks.md, "Calibration
//! when the noise is tiny"), on INVENTED data: the generator of
//! benches/support/near_noiseless.rs, a made-up smooth function of 12
//! inputs with Gaussian noise of sd 1e-4 of its range (seeded; no
//! measurements of anything, and no benchmark test split chose anything
//! here).
//!
//! Honest error bars put 68.27 % of fresh rows inside the central 68.27 %
//! predictive interval (Abramowitz & Stegun 1964, Table 26.1, for the
//! Gaussian share). The band [0.63, 0.73] allows 2000 fresh rows'
//! binomial sd (0.010) several times over and the spread of the
//! committee's own calibration from one training set to another.
//!
//! IGNORED, NOT YET MET BY DEFAULT. Measured 2026-12-05 (branch
//! s13-calibration, search 1..6 × 2, 4000 training rows, 2000 fresh rows,
//! seed 7): default settings coverage_68 0.674 with the Student-t ν = 3
//! the held-out part chose (0.808 within ±1 sd), coverage_95 0.977, rms of
//! z 0.80, NLPD −2.806; with the held-out factor on the committee's model
//! part (`model_var_scale(true)`, chosen c = 1/16) coverage_68 0.646,
//! coverage_95 0.947, rms z 1.07, NLPD −2.893. With 2600 training rows
//! and a search of 2..5 × 1 the factor gave coverage_68 0.789, and on
//! 2000 rows 0.805: the factor learnt on the held-out part does not carry
//! over to the committee refitted on all rows in every case, and on the
//! shared UCI splits it lowered the test LL, so it stays off by default.
//! The test runs for minutes (run with `--ignored`); it checks the opt-in
//! factor, where the measurement above put it in band.

#[path = "../benches/support/near_noiseless.rs"]
mod near_noiseless;

use mettle::committee::CommitteeParams;
use mettle::data::Table;
use mettle::model::TrainSpec;
use mettle::observer::Silent;
use mettle::Model;

/// Training rows (more than 2500, so that the residual process is fitted
/// on its 2000-row cap both on the training part and on all rows, as on a
/// large archive) and fresh rows.
const TRAIN_ROWS: usize = 4000;
const FRESH_ROWS: usize = 2000;

fn coverages(model_var_scale: bool) -> (f64, f64, f64) {
    let (train, _) = near_noiseless::columns(TRAIN_ROWS, 7);
    let (fresh, _) = near_noiseless::columns(FRESH_ROWS, 1007);
    let train = Table::from_columns("near-noiseless (invented)", train).expect("table");
    let fresh = Table::from_columns("near-noiseless fresh (invented)", fresh).expect("table");
    let mut spec = TrainSpec::new(&["y"]);
    spec.auto_log_inputs = false;
    // the search reduced from the default 1..10 × 4
    spec.params = CommitteeParams::default()
        .hidden(1, 6)
        .restarts(2)
        .seed(7)
        .model_var_scale(model_var_scale);
    let model = Model::train(&train, &spec, &Silent).expect("training succeeds");
    let (_, e) = model
        .evaluate(&fresh)
        .expect("evaluates")
        .pop()
        .expect("one target");
    let e = e.expect("rows");
    (e.coverage_68, e.coverage_95, e.nlpd)
}

#[test]
#[ignore = "minutes of training; the target is not yet met by default (see the module doc)"]
fn central_interval_covers_its_share_when_the_noise_is_tiny() {
    let (c68, c95, nlpd) = coverages(true);
    assert!(
        (0.63..=0.73).contains(&c68) && (0.92..=0.98).contains(&c95),
        "coverage_68 {c68}, coverage_95 {c95}, nlpd {nlpd}"
    );
}
