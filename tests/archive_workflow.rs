//! A real archive's workflow through the real binary (issue: identities,
//! output shape, messages): rows named by their heat code in every per-row
//! output, one JSON shape, CSV numbers to a set precision, the caution
//! once per output, tables that fit a terminal.
//!
//! The fixture is the invented one of tests/common (y = 3·sin(2·x1) +
//! 0.5·x2 + noise), with an invented heat code in front of every row.

mod common;

use common::{describe, fixture_csv, stderr, stdout, Workdir};
use serde_json::Value;

/// The fixture with a first column `heat` holding FH-1001, FH-1002, ...
fn with_heats(csv: &str) -> String {
    let mut out = String::new();
    for (i, line) in csv.lines().enumerate() {
        if i == 0 {
            out.push_str(&format!("heat,{line}\n"));
        } else {
            out.push_str(&format!("FH-{},{line}\n", 1000 + i));
        }
    }
    out
}

/// A workdir with `train.csv` (150 rows, heat codes in front) and a model
/// trained on it with the quick path (no --inputs): the heat column is
/// text and is not taken as an input.
fn trained() -> Workdir {
    let w = Workdir::new();
    w.write("train.csv", with_heats(&fixture_csv(150, 11)));
    let args = [
        "train",
        "--data",
        "train.csv",
        "--target",
        "y",
        "--out",
        "m.json",
        "--hidden",
        "1..3",
        "--restarts",
        "2",
        "--seed",
        "1",
        "--quiet",
    ];
    w.ok(&args);
    w
}

/// Three rows inside the training ranges and one far outside (x1 = 2.5).
const QUERY: &str =
    "heat,x1,x2\nFH-2001,-0.5,1.0\nFH-2002,0.0,0.5\nFH-2003,0.4,1.5\nFH-2004,2.5,1.0\n";

#[test]
fn predict_names_every_row_by_its_heat_in_each_format() {
    let w = trained();
    w.write("q.csv", QUERY);
    let base = ["predict", "--model", "m.json", "--input", "q.csv"];
    // table: the heat beside the row number, the verdict before the numbers
    let out = w.ok(&base);
    let text = stdout(&out);
    let line = text
        .lines()
        .find(|l| l.contains("FH-2004"))
        .unwrap_or_else(|| panic!("no FH-2004 in\n{text}"));
    assert!(line.find("OUT") < line.find('.'), "{line}");
    assert!(text.contains("row 4 (FH-2004): OUT"), "{text}");
    assert!(text.lines().all(|l| l.chars().count() <= 100), "{text}");
    assert_eq!(text.matches("not test results").count(), 1, "{text}");
    // CSV: the heat column second, numbers to 6 significant digits
    let mut args = base.to_vec();
    args.extend(["--format", "csv"]);
    let out = w.ok(&args);
    let csv = stdout(&out);
    let lines: Vec<&str> = csv.lines().collect();
    assert!(
        lines[0].starts_with("row,heat,in_domain,domain,y_mean,"),
        "{csv}"
    );
    assert!(lines[4].starts_with("4,FH-2004,false,outside,"), "{csv}");
    assert_eq!(csv.matches("not test results").count(), 1, "{csv}");
    let mean: &str = lines[1].split(',').nth(4).expect("y_mean");
    assert!(
        mean.replace(['-', '.'], "").trim_start_matches('0').len() <= 6,
        "{mean}"
    );
    // --digits 3
    args.extend(["--digits", "3"]);
    let out = w.ok(&args);
    let mean3: f64 = stdout(&out)
        .lines()
        .nth(1)
        .expect("row")
        .split(',')
        .nth(4)
        .expect("y_mean")
        .parse()
        .expect("number");
    let mean6: f64 = mean.parse().expect("number");
    assert!(
        (mean3 - mean6).abs() <= 0.005 * mean6.abs().max(1e-3),
        "{mean3} {mean6}"
    );
    // JSON: keyed by target even for one target; id per row
    let mut args = base.to_vec();
    args.extend(["--format", "json"]);
    let out = w.ok(&args);
    let v: Value = serde_json::from_slice(&out.stdout).expect("JSON");
    assert_eq!(v["id_column"], "heat", "{v}");
    assert_eq!(v["rows"][3]["id"], "FH-2004", "{v}");
    // the graded verdict beside in_domain: false only for outside
    assert_eq!(v["rows"][3]["domain"], "outside", "{v}");
    assert_eq!(v["rows"][3]["in_domain"], false, "{v}");
    assert!(v["rows"][0]["estimates"]["y"]["sd"].is_number(), "{v}");
    assert!(v["targets"]["y"]["shape"].is_string(), "{v}");
}

#[test]
fn an_id_column_is_chosen_or_refused_with_a_suggestion() {
    let w = trained();
    // a numeric code is not taken by default, but by --id
    w.write("q.csv", "lab_no,x1,x2\n501,0.1,1.0\n502,0.2,1.1\n");
    let base = [
        "predict", "--model", "m.json", "--input", "q.csv", "--format", "csv",
    ];
    let text = stdout(&w.ok(&base));
    assert!(text.starts_with("row,in_domain,"), "{text}");
    let mut args = base.to_vec();
    args.extend(["--id", "lab_no"]);
    let text = stdout(&w.ok(&args));
    assert!(
        text.starts_with("row,lab_no,in_domain,") && text.contains("\n2,502,"),
        "{text}"
    );
    // a misspelt or wrongly cased name: "did you mean"
    let mut args = base.to_vec();
    args.extend(["--id", "Lab_No"]);
    let out = w.run(&args);
    assert_eq!(out.status.code(), Some(2), "{}", describe(&args, &out));
    assert!(
        stderr(&out).contains("did you mean 'lab_no'"),
        "{}",
        describe(&args, &out)
    );
}

#[test]
fn evaluate_screen_and_audit_name_rows_by_heat() {
    let w = trained();
    // heat FH-1037 mis-keyed: truth + 3, 15 noise sds off
    let mut lines: Vec<String> = with_heats(&fixture_csv(100, 12))
        .lines()
        .map(str::to_string)
        .collect();
    let cells: Vec<String> = lines[37].split(',').map(str::to_string).collect();
    let y: f64 = cells[3].parse().expect("y");
    lines[37] = format!("{},{},{},{}", cells[0], cells[1], cells[2], y + 3.0);
    w.write("test.csv", lines.join("\n") + "\n");
    let args = ["evaluate", "--model", "m.json", "--data", "test.csv"];
    let out = w.ok(&args);
    let text = stdout(&out);
    assert!(
        text.lines()
            .any(|l| l.trim_start().starts_with("37  FH-1037")),
        "{}",
        describe(&args, &out)
    );
    let mut jargs = args.to_vec();
    jargs.extend(["--format", "json"]);
    let v: Value = serde_json::from_slice(&w.ok(&jargs).stdout).expect("JSON");
    assert_eq!(v["out_of_line"][0]["id"], "FH-1037", "{v}");
    assert_eq!(v["id_column"], "heat", "{v}");

    // screen: the heat and the candidate's inputs as given
    w.write("cands.csv", QUERY);
    let sargs = [
        "screen",
        "--model",
        "m.json",
        "--input",
        "cands.csv",
        "--require",
        "y>=0",
        "--format",
        "csv",
    ];
    let out = w.ok(&sargs);
    let csv = stdout(&out);
    assert!(
        csv.starts_with("rank,row,heat,x1,x2,"),
        "{}",
        describe(&sargs, &out)
    );
    assert!(
        csv.contains(",4,FH-2004,2.5,1,"),
        "{}",
        describe(&sargs, &out)
    );
    let mut targs = sargs[..8].to_vec();
    targs.push("table");
    let text = stdout(&w.ok(&targs));
    assert!(text.contains("FH-2004"), "{text}");

    // audit: an outlier (x1 = 40 where the rest lie in −1..1) named by its heat
    let cells: Vec<String> = lines[50].split(',').map(str::to_string).collect();
    lines[50] = format!("{},40,{},{}", cells[0], cells[2], cells[3]);
    w.write("audit.csv", lines.join("\n") + "\n");
    let aargs = ["audit", "--data", "audit.csv", "--target", "y"];
    let out = w.ok(&aargs);
    assert!(
        stdout(&out).contains("x1 row 50 (FH-1050): 40"),
        "{}",
        describe(&aargs, &out)
    );
}

/// Docs that agree with outputs: every key `explain --format json` emits
/// for the bundled invented model is named in `explain --help`.
#[test]
fn explain_help_names_every_key_its_json_emits() {
    let w = Workdir::new();
    let repo = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let model = repo.join("models/fellhaven_welds.json");
    let model = model.to_str().expect("utf-8");
    let v: Value = serde_json::from_slice(
        &w.ok(&["explain", "--model", model, "--format", "json"])
            .stdout,
    )
    .expect("JSON");
    let help = stdout(&w.ok(&["explain", "--help"]));
    let mut keys: Vec<String> = Vec::new();
    let mut add = |o: &Value| {
        if let Some(m) = o.as_object() {
            keys.extend(m.keys().cloned());
        }
    };
    add(&v);
    add(&v["inputs"][0]);
    for t in v["targets"].as_array().expect("targets") {
        add(t);
        add(&t["members"][0]);
        add(&t["gross_errors"]);
        add(&t["kriging"]);
    }
    keys.sort();
    keys.dedup();
    let missing: Vec<&String> = keys.iter().filter(|k| !help.contains(k.as_str())).collect();
    assert!(missing.is_empty(), "explain --help omits {missing:?}");
}

/// A transition whose 95 % interval is not reached inside the range says
/// so in words (the bundled invented model; the range −80 to −70 °C lies
/// below every crossing of 100 J).
#[test]
fn transition_says_in_words_when_an_interval_end_is_not_reached() {
    let w = Workdir::new();
    let repo = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let model = repo.join("models/fellhaven_welds.json");
    let base = repo.join("datasets/fellhaven_new_welds.csv");
    let args = [
        "transition",
        "--model",
        model.to_str().expect("utf-8"),
        "--temperature-input",
        "test_temp_c",
        "--target",
        "charpy_j",
        "--base",
        base.to_str().expect("utf-8"),
        "--from",
        "-80",
        "--to",
        "-70",
        "--energy",
        "300",
    ];
    let out = w.ok(&args);
    let text = stdout(&out);
    assert!(
        !text.contains("not reached to not reached"),
        "{}",
        describe(&args, &out)
    );
    assert!(
        !text.contains("not reached °C"),
        "{}",
        describe(&args, &out)
    );
    assert!(text.contains("T300J:"), "{}", describe(&args, &out));
}

/// One flag spelling across commands: the table to read is `--data` or
/// `--input` for train, predict, evaluate, screen and audit alike.
#[test]
fn the_table_flag_is_spelt_either_way_everywhere() {
    let w = trained();
    w.write("q.csv", QUERY);
    let a = stdout(&w.ok(&[
        "predict", "--model", "m.json", "--input", "q.csv", "--format", "csv",
    ]));
    let b = stdout(&w.ok(&[
        "predict", "--model", "m.json", "--data", "q.csv", "--format", "csv",
    ]));
    assert_eq!(a, b);
    w.write("t.csv", with_heats(&fixture_csv(30, 13)));
    w.ok(&["evaluate", "--model", "m.json", "--input", "t.csv"]);
    w.ok(&["audit", "--input", "t.csv", "--target", "y"]);
    w.ok(&[
        "screen",
        "--model",
        "m.json",
        "--data",
        "q.csv",
        "--require",
        "y>=0",
    ]);
}
