//! Insight commands through the real binary: `mettle explain` (the model
//! card and input relevance), `mettle report` (the self-contained HTML
//! report, parsed as XML) and `mettle compare`.
//!
//! Every table here is invented by a generator whose truth is known; the
//! checks are against that truth (the generator's own settings) and, for
//! the calibration curve and the replicate scatter, against the binomial
//! and chi-square distributions (any statistics handbook; quantiles from
//! statrs). Searches are small (`--hidden 1..4 --restarts 2 --no-widen`)
//! so that each test runs in a few seconds.

use mettle::fixedmath::FixedMath;
mod common;

use std::collections::HashMap;
use std::fmt::Write as _;

use common::{describe, fixture_csv, Workdir, FIXTURE_NOISE_SD};
use quick_xml::events::Event;
use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;
use serde_json::Value;
use statrs::distribution::{ChiSquared, ContinuousCDF};

const SMALL: [&str; 9] = [
    "--hidden",
    "1..4",
    "--restarts",
    "2",
    "--no-widen",
    "--seed",
    "1",
    "--quiet",
    "--no-log-inputs",
];

/// Noise sd of the relevance table's target (the generator's setting).
const PLANTED_NOISE_SD: f64 = 0.1;

/// 300 rows: inputs ~ U(−1, 1); `strong` drives y strongly, `weak` mildly,
/// `idle` not at all: y = 1.5·sin(2.5·strong) + 0.3·sin(2·weak) + N(0, 0.1²).
/// Both effects are curved alike: relevance measures the size of the input
/// weights, and a straight-line effect can be carried by small input
/// weights, so a linear `strong` would not be a fair plant (see
/// docs/insight.md). 30 rows are followed by a repeat test (identical
/// inputs, fresh noise).
fn planted_csv() -> String {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(5);
    let noise = Normal::new(0.0, PLANTED_NOISE_SD).expect("positive sd");
    let mut s = String::from("idle,strong,weak,y\n");
    let mut row = |x: [f64; 3], rng: &mut Xoshiro256PlusPlus| {
        let y = 1.5 * (2.5 * x[1]).sin_fixed() + 0.3 * (2.0 * x[2]).sin_fixed() + noise.sample(rng);
        writeln!(s, "{},{},{},{y}", x[0], x[1], x[2]).expect("write to string");
    };
    for i in 0..270 {
        let x: [f64; 3] = std::array::from_fn(|_| rng.random_range(-1.0..1.0));
        row(x, &mut rng);
        if i < 30 {
            row(x, &mut rng);
        }
    }
    s
}

fn train(w: &Workdir, data: &str, out: &str, extra: &[&str]) {
    let mut args = vec!["train", "--data", data, "--target", "y", "--out", out];
    args.extend(SMALL);
    args.extend(extra);
    w.ok(&args);
}

fn json_of(w: &Workdir, args: &[&str]) -> Value {
    let out = w.ok(args);
    serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|e| panic!("stdout is not JSON ({e})\n{}", describe(args, &out)))
}

#[test]
fn relevance_ranks_the_planted_inputs_and_the_card_shows_replicate_scatter() {
    let w = Workdir::new();
    w.write("planted.csv", planted_csv());
    train(&w, "planted.csv", "m.json", &["--noise", "constant"]);
    let card = json_of(&w, &["explain", "--model", "m.json", "--format", "json"]);
    let t = &card["targets"][0];
    let rel = t["relevance"].as_object().expect("relevance is an object");
    let get = |k: &str| {
        rel[k]
            .as_f64()
            .unwrap_or_else(|| panic!("relevance of {k}"))
    };
    // the planted strong input is the most relevant (normalised to 1), the
    // planted idle one the least
    assert!((get("strong") - 1.0).abs() < 1e-12, "{rel:?}");
    assert!(
        get("idle") < get("weak") && get("weak") < get("strong"),
        "{rel:?}"
    );
    assert!(t["relevance_note"]
        .as_str()
        .expect("note")
        .contains("not a causal effect"));
    // the fitted noise sd is the planted one, within 25 % (300 rows)
    let noise = t["noise_sd"].as_f64().expect("noise_sd");
    assert!(
        (noise / PLANTED_NOISE_SD - 1.0).abs() < 0.25,
        "noise sd {noise}"
    );
    assert!(t["members"].as_array().is_some_and(|m| !m.is_empty()));
    // 30 pairs of repeat tests: s_p²/σ² ~ χ²_30/30; both 0.1 % tails
    let r = &t["replicate_sd"];
    assert_eq!(r["dof"], 30, "{r}");
    let sp = r["pooled_sd"].as_f64().expect("pooled sd");
    let chi = ChiSquared::new(30.0).expect("dof > 0");
    let lo = PLANTED_NOISE_SD * (chi.inverse_cdf(0.001) / 30.0).sqrt();
    let hi = PLANTED_NOISE_SD * (chi.inverse_cdf(0.999) / 30.0).sqrt();
    assert!(lo < sp && sp < hi, "pooled sd {sp} outside {lo}..{hi}");
    // the table format says the same in words
    let text =
        String::from_utf8_lossy(&w.ok(&["explain", "--model", "m.json"]).stdout).into_owned();
    assert!(
        text.contains("measured replicate scatter: pooled sd"),
        "{text}"
    );
}

#[test]
fn a_model_file_without_the_training_summary_still_explains() {
    let w = Workdir::new();
    w.write("train.csv", fixture_csv(150, 3));
    // the committee's 1/β is compared: no residual process
    train(
        &w,
        "train.csv",
        "m.json",
        &["--noise", "constant", "--kriging", "off"],
    );
    let mut model: Value = serde_json::from_slice(&w.read("m.json")).expect("model JSON");
    let summary = model["targets"][0]
        .as_object_mut()
        .expect("target object")
        .remove("training_summary");
    assert!(summary.is_some(), "new files record the training summary");
    w.write("old.json", serde_json::to_vec(&model).expect("JSON"));
    let new = json_of(&w, &["explain", "--model", "m.json", "--format", "json"]);
    let old = json_of(&w, &["explain", "--model", "old.json", "--format", "json"]);
    // constant noise on an untransformed target: both ways give the
    // committee's mean 1/√β
    let (a, b) = (
        new["targets"][0]["noise_sd"].as_f64().expect("noise"),
        old["targets"][0]["noise_sd"].as_f64().expect("noise"),
    );
    assert!((a - b).abs() <= 1e-9 * a, "{a} vs {b}");
    assert!((a / FIXTURE_NOISE_SD - 1.0).abs() < 0.3, "{a}");
    assert!(old["targets"][0]["replicate_sd"].is_null());
    assert!(old["targets"][0]["noise_basis"]
        .as_str()
        .expect("basis")
        .contains("does not record"));
}

/// What the test reads from a parsed report.
#[derive(Default)]
struct Parsed {
    /// Ids of `<section>` elements, in order.
    sections: Vec<String>,
    /// Per `<figure>` id: how many `<svg>` it holds.
    figures: Vec<(String, usize)>,
    /// Text of the first section.
    first_section_text: String,
    /// Every attribute value, and the text of every `<style>`.
    attribute_values: Vec<String>,
    style_text: String,
    /// Element names seen.
    elements: Vec<String>,
    /// Calibration rows: table id → (nominal, observed, binomial sd).
    calibration: HashMap<String, Vec<(f64, f64, f64)>>,
}

/// Parse the report as XML (strict: every element closed, end names
/// checked); a malformed report fails the test.
fn parse_report(html: &str) -> Parsed {
    let mut reader = quick_xml::Reader::from_str(html);
    reader.config_mut().check_end_names = true;
    let mut p = Parsed::default();
    let mut stack: Vec<String> = Vec::new();
    let mut figure: Option<(String, usize)> = None;
    let mut table: Option<String> = None;
    let mut in_first = false;
    loop {
        let ev = reader.read_event().unwrap_or_else(|e| {
            panic!(
                "report is not well formed at {}: {e}",
                reader.buffer_position()
            )
        });
        match ev {
            Event::Start(ref e) | Event::Empty(ref e) => {
                let name = String::from_utf8_lossy(e.name().as_ref()).into_owned();
                let mut attrs: HashMap<String, String> = HashMap::new();
                for a in e.attributes() {
                    let a = a.expect("well-formed attribute");
                    let v = a.unescape_value().expect("attribute value").into_owned();
                    attrs.insert(
                        String::from_utf8_lossy(a.key.as_ref()).into_owned(),
                        v.clone(),
                    );
                    p.attribute_values.push(v);
                }
                match name.as_str() {
                    "section" => {
                        let id = attrs.get("id").cloned().unwrap_or_default();
                        in_first = p.sections.is_empty();
                        p.sections.push(id);
                    }
                    "figure" => figure = Some((attrs.get("id").cloned().unwrap_or_default(), 0)),
                    "svg" => {
                        if let Some(f) = figure.as_mut() {
                            f.1 += 1;
                        }
                    }
                    "table" => table = attrs.get("id").cloned(),
                    "tr" => {
                        if let (Some(t), Some(nom)) = (&table, attrs.get("data-nominal")) {
                            let f = |k: &str| attrs[k].parse::<f64>().expect("number");
                            p.calibration.entry(t.clone()).or_default().push((
                                nom.parse().expect("number"),
                                f("data-observed"),
                                f("data-binomial-sd"),
                            ));
                        }
                    }
                    _ => {}
                }
                p.elements.push(name.clone());
                if matches!(ev, Event::Start(_)) {
                    stack.push(name);
                }
            }
            Event::End(e) => {
                let name = String::from_utf8_lossy(e.name().as_ref()).into_owned();
                assert_eq!(stack.pop().as_deref(), Some(name.as_str()));
                match name.as_str() {
                    "figure" => p.figures.extend(figure.take()),
                    "table" => table = None,
                    "section" => in_first = false,
                    _ => {}
                }
            }
            Event::Text(t) => {
                let s = t.decode().expect("text").into_owned();
                if in_first {
                    p.first_section_text.push_str(&s);
                }
                if stack.last().map(String::as_str) == Some("style") {
                    p.style_text.push_str(&s);
                }
            }
            Event::Eof => break,
            _ => {}
        }
    }
    assert!(stack.is_empty(), "unclosed elements: {stack:?}");
    p
}

fn report_of(w: &Workdir, args: &[&str]) -> Parsed {
    w.ok(args);
    let html = String::from_utf8(w.read("report.html")).expect("UTF-8 report");
    parse_report(&html)
}

#[test]
fn the_report_has_every_section_and_chart_and_no_external_url() {
    let w = Workdir::new();
    w.write("train.csv", fixture_csv(150, 21));
    w.write("test.csv", fixture_csv(80, 22));
    train(&w, "train.csv", "m.json", &[]);
    let p = report_of(
        &w,
        &[
            "report",
            "--model",
            "m.json",
            "--data",
            "test.csv",
            "--training-data",
            "train.csv",
            "--out",
            "report.html",
        ],
    );
    assert_eq!(
        p.sections,
        mettle::report::SECTIONS.map(String::from).to_vec(),
        "sections in order"
    );
    assert!(p
        .first_section_text
        .contains("qualification tests an applicable code requires"));
    assert!(p.first_section_text.contains("licensed engineers decide"));
    let ids: Vec<&str> = p.figures.iter().map(|f| f.0.as_str()).collect();
    for want in [
        "fig-noise-y",
        "fig-relevance-y",
        "fig-candidates-y",
        "fig-committee-size-y",
        "fig-estimates-y",
        "fig-calibration-y",
        "fig-residuals-y-x1",
        "fig-residuals-y-x2",
    ] {
        assert!(ids.contains(&want), "{want} missing from {ids:?}");
    }
    assert!(
        p.figures.iter().all(|f| f.1 == 1),
        "one svg per figure: {:?}",
        p.figures
    );
    // self-contained: nothing that loads, no URL in any attribute or style
    for bad in [
        "script", "link", "img", "iframe", "object", "embed", "image", "use",
    ] {
        assert!(
            !p.elements.iter().any(|e| e == bad),
            "<{bad}> in the report"
        );
    }
    for v in &p.attribute_values {
        assert!(
            !v.contains("://") && !v.starts_with("//") && !v.starts_with("data:"),
            "URL in attribute: {v}"
        );
    }
    assert!(!p.style_text.contains("url(") && !p.style_text.contains("@import"));
    // a document: the summary right after the caution, a table of contents,
    // the effect curves of the main inputs, explanations folded, a print style
    assert_eq!(p.sections[1], "summary");
    assert!(p.elements.iter().any(|e| e == "nav"));
    assert!(p.elements.iter().filter(|e| *e == "details").count() >= 3);
    for want in ["fig-effect-y-x1", "fig-effect-y-x2"] {
        assert!(ids.contains(&want), "{want} missing from {ids:?}");
    }
    assert!(p.style_text.contains("@media print"));
    // both parts have a calibration table
    assert!(p.calibration.contains_key("calibration-y-training-rows"));
    assert!(p.calibration.contains_key("calibration-y-held-out-rows"));

    // without tables every section is still there, charts of rows are not
    let bare = report_of(&w, &["report", "--model", "m.json", "--out", "report.html"]);
    assert_eq!(bare.sections, p.sections);
    assert!(!bare
        .figures
        .iter()
        .any(|f| f.0.starts_with("fig-estimates")));
    // a table that is not the training data is refused as such
    let out = w.fails(
        &[
            "report",
            "--model",
            "m.json",
            "--training-data",
            "test.csv",
            "--out",
            "r2.html",
        ],
        2,
    );
    assert!(String::from_utf8_lossy(&out.stderr).contains("not the rows this model was trained on"));
}

/// The fixture's generator is the model's own assumption (a smooth function
/// plus Gaussian noise of constant sd). On 1000 fresh rows the count inside
/// each central interval is then Binomial(1000, p) up to the model's
/// estimation error, and the test allows 3 binomial sds at each of the 11
/// levels: one level strays that far with probability 0.0027 (normal
/// approximation), any of the 11 with at most 0.03 (union bound); the seed
/// is fixed, so the outcome is too. Estimation error is not in the
/// tolerance: at p = 68 % a 3 % error in the noise sd moves the coverage by
/// about 1.5 points against a tolerance of 4.4.
#[test]
fn calibration_on_data_from_the_models_assumptions_is_within_binomial_error() {
    let w = Workdir::new();
    w.write("train.csv", fixture_csv(500, 31));
    w.write("fresh.csv", fixture_csv(1000, 32));
    train(&w, "train.csv", "m.json", &["--noise", "constant"]);
    let p = report_of(
        &w,
        &[
            "report",
            "--model",
            "m.json",
            "--data",
            "fresh.csv",
            "--out",
            "report.html",
        ],
    );
    let curve = &p.calibration["calibration-y-held-out-rows"];
    assert_eq!(curve.len(), 11);
    for &(nominal, observed, sd) in curve {
        let tol = 3.0 * (nominal * (1.0 - nominal) / 1000.0).sqrt();
        assert!((sd - tol / 3.0).abs() < 1e-12, "reported binomial sd {sd}");
        assert!(
            (observed - nominal).abs() <= tol,
            "level {nominal}: observed {observed}, tolerance {tol}"
        );
    }
}

#[test]
fn compare_of_a_model_with_itself_reports_zero_differences() {
    let w = Workdir::new();
    w.write("train.csv", fixture_csv(150, 41));
    w.write("more.csv", fixture_csv(220, 42));
    w.write("test.csv", fixture_csv(80, 43));
    train(&w, "train.csv", "old.json", &[]);
    train(&w, "more.csv", "new.json", &[]);
    let same = json_of(
        &w,
        &[
            "compare", "--old", "old.json", "--new", "old.json", "--data", "test.csv", "--format",
            "json",
        ],
    );
    assert_eq!(same["n_differences"], 0, "{same}");
    assert_eq!(same["training_changes"].as_array().map(Vec::len), Some(0));
    assert_eq!(same["targets"][0]["old"], same["targets"][0]["new"]);
    let text = String::from_utf8_lossy(
        &w.ok(&[
            "compare", "--old", "old.json", "--new", "old.json", "--data", "test.csv",
        ])
        .stdout,
    )
    .into_owned();
    assert!(text.contains("0 difference(s) in all"), "{text}");
    // a model retrained on other rows: the fingerprint and row count change
    let diff = json_of(
        &w,
        &[
            "compare", "--old", "old.json", "--new", "new.json", "--data", "test.csv", "--format",
            "json",
        ],
    );
    let changes: Vec<&str> = diff["training_changes"]
        .as_array()
        .expect("array")
        .iter()
        .filter_map(Value::as_str)
        .collect();
    assert!(
        changes
            .iter()
            .any(|c| c.starts_with("training rows differ: fingerprint")),
        "{changes:?}"
    );
    assert!(changes.contains(&"training rows: 150 → 220"), "{changes:?}");
    assert!(diff["n_differences"].as_u64().is_some_and(|n| n >= 2));
}
