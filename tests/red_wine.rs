//! The whole engine on real data: red-wine quality (UCI; Cortez, Cerdeira,
//! Almeida, Matos & Reis 2009, "Modeling wine preferences by data mining
//! from physicochemical properties", Decision Support Systems 47(4):547),
//! 1599 wines × 11 physicochemical inputs, target the sensory quality
//! score, as shipped in the crate `linfa-datasets` 0.8.1
//! (`winequality()`: its targets are the integer scores, taken as f64).
//!
//! One fixed, seeded 90/10 split; default settings except `hidden(1, 6)`
//! and `restarts(2)` (default 1..10 × 4) so that training stays well under
//! a minute; the search may still widen.
//!
//! # The bounds
//!
//! Published results on this data (/work/shared/reference/published-uci.md:
//! Hernández-Lobato & Adams 2015; Gal & Ghahramani 2016; Lakshminarayanan
//! et al. 2017; Duan et al. 2020), as means over 20 random 90/10 splits:
//!
//! - test RMSE 0.60 (best cell) to 0.64 (worst), SE 0.01;
//! - test log-likelihood −0.90 to −0.97 (NLPD 0.90–0.97), SE 0.01–0.02.
//!
//! This test sees one split, not twenty. One split's SD is √20 ≈ 4.5 times
//! the SE: ≈ 0.045 for RMSE (the SD-reported cells say 0.04), and for NLPD
//! ≈ 0.045–0.09 (the SD-reported cells say 0.06 and 0.12); take 0.06. The
//! bounds are the worst published cell plus two single-split SDs:
//! RMSE ≤ 0.64 + 2·0.045 ≈ 0.73 and NLPD ≤ 0.97 + 2·0.06 ≈ 1.09.
//! Coverage of mean ± 2 sd on 160 test rows: honest error bars give 0.95
//! with binomial SD √(0.95·0.05/160) ≈ 0.017; the lower bound 0.88 is four
//! of those below.
//!
//! The bounds are not a guarantee for every split: while writing this
//! test, 13 other split seeds gave RMSE 0.56–0.74 (mean 0.648) and NLPD
//! 0.86–1.16 (mean 0.978) with these settings; one of the 13 is above both
//! bounds. The split seed below was fixed before its result was seen.

use mettle::committee::CommitteeParams;
use mettle::data::Table;
use mettle::metrics::evaluate;
use mettle::model::TrainSpec;
use mettle::observer::Silent;
use mettle::Model;
use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

/// Seed of the 90/10 split.
const SPLIT_SEED: u64 = 0;

#[test]
fn red_wine_accuracy_and_error_bars_are_in_the_published_range() {
    let ds = linfa_datasets::winequality();
    let x = ds.records();
    let quality: Vec<f64> = ds.targets().iter().map(|&q| q as f64).collect();
    assert_eq!(x.dim(), (1599, 11), "the UCI red-wine table");
    assert!(quality.iter().all(|q| (3.0..=8.0).contains(q)));
    let names = ds.feature_names();

    let mut order: Vec<usize> = (0..x.nrows()).collect();
    order.shuffle(&mut Xoshiro256PlusPlus::seed_from_u64(SPLIT_SEED));
    let n_test = (x.nrows() as f64 * 0.1).round() as usize;
    let (test, train) = order.split_at(n_test);
    let table = |rows: &[usize], with_target: bool| {
        let mut cols: Vec<(String, Vec<f64>)> = (0..x.ncols())
            .map(|j| (names[j].clone(), rows.iter().map(|&i| x[[i, j]]).collect()))
            .collect();
        if with_target {
            cols.push(("quality".into(), rows.iter().map(|&i| quality[i]).collect()));
        }
        Table::from_columns("winequality-red", cols).expect("table")
    };

    let mut spec = TrainSpec::new(&["quality"]);
    spec.params = CommitteeParams::default().hidden(1, 6).restarts(2);
    let model = Model::train(&table(train, true), &spec, &Silent).expect("training");
    let rows = model.predict(&table(test, false)).expect("predict");
    let measured: Vec<f64> = test.iter().map(|&i| quality[i]).collect();
    let mean: Vec<f64> = rows.iter().map(|r| r.estimates[0].mean).collect();
    let sd: Vec<f64> = rows.iter().map(|r| r.estimates[0].sd).collect();
    let e = evaluate(&measured, &mean, &sd).expect("test rows");
    eprintln!("red wine, split seed {SPLIT_SEED}: {e:?}");

    assert_eq!(e.n, 160);
    assert!(
        e.rmse <= 0.73,
        "RMSE {} above the bound 0.73: {e:?}",
        e.rmse
    );
    assert!(
        e.nlpd <= 1.09,
        "NLPD {} above the bound 1.09: {e:?}",
        e.nlpd
    );
    assert!(
        (0.88..=1.0).contains(&e.coverage_95),
        "coverage_95 {} outside [0.88, 1]: {e:?}",
        e.coverage_95
    );
}
