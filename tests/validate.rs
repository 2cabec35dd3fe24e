//! `mettle validate` through the real binary: grouped folds, every row
//! estimated once, the known noise of the invented fixture recovered, the
//! row file, the chart and the report section.

mod common;

use common::{describe, fixture_csv, stdout, Workdir, FIXTURE_NOISE_SD};
use serde_json::Value;

const SMALL: [&str; 9] = [
    "--hidden",
    "1..3",
    "--restarts",
    "1",
    "--seed",
    "3",
    "--kriging",
    "off",
    "--quiet",
];

/// The fixture with a `heat` column: rows 3k, 3k+1, 3k+2 share a heat.
fn grouped_fixture(n: usize) -> String {
    let text = fixture_csv(n, 21);
    let mut out = String::new();
    for (i, l) in text.lines().enumerate() {
        if i == 0 {
            out += &format!("heat,{l}\n");
        } else {
            out += &format!("H{},{l}\n", (i - 1) / 3);
        }
    }
    out
}

#[test]
fn validate_grouped_folds_rows_chart_and_report() {
    let w = Workdir::new();
    w.write("d.csv", grouped_fixture(120));
    let mut args = vec![
        "validate", "--data", "d.csv", "--target", "y", "--inputs", "x1,x2", "--folds", "4",
        "--group", "heat", "--format", "json", "--out", "cv.json", "--rows", "oof.csv", "--svg",
        "oof.svg", "--png",
    ];
    args.extend(SMALL);
    let out = w.ok(&args);
    let v: Value = serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|e| panic!("not JSON ({e})\n{}", describe(&args, &out)));
    assert_eq!(v["n_groups"], 40);
    let t = &v["targets"][0];
    let rows = t["rows"].as_array().expect("rows");
    // every row out-of-fold exactly once (K-fold: Stone 1974)
    let mut seen: Vec<u64> = rows
        .iter()
        .map(|r| r["row"].as_u64().expect("row"))
        .collect();
    seen.sort_unstable();
    assert_eq!(seen, (1..=120).collect::<Vec<u64>>());
    // a heat's three rows share a fold
    for r in rows {
        let row = r["row"].as_u64().expect("row") as usize;
        let first = (row - 1) / 3 * 3 + 1;
        let f = rows
            .iter()
            .find(|q| q["row"].as_u64() == Some(first as u64))
            .expect("first row of the heat");
        assert_eq!(r["fold"], f["fold"], "row {row} left its heat");
    }
    // the fixture's noise sd is known (tests/common): the out-of-fold RMSE
    // estimates it within 2 standard errors
    let (rmse, se) = (
        t["rmse"]["value"].as_f64().expect("rmse"),
        t["rmse"]["se"].as_f64().expect("se"),
    );
    assert!(
        (rmse - FIXTURE_NOISE_SD).abs() <= 2.0 * se,
        "rmse {rmse} ± {se} against noise sd {FIXTURE_NOISE_SD}"
    );
    // the files
    let csv = String::from_utf8(w.read("oof.csv")).expect("utf-8");
    assert_eq!(csv.lines().count(), 121);
    assert!(csv.starts_with("target,row,repeat,fold,measured,mean,sd,lo95,hi95,in_domain\n"));
    let svg = String::from_utf8(w.read("oof.svg")).expect("utf-8");
    assert!(svg.contains("<svg") && svg.trim_end().ends_with("</svg>"));
    // --png: the chart beside it, a PNG by its signature (PNG spec, 2nd ed., §5.2)
    let png = w.read("oof.png");
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
    // the report section from the saved file
    w.ok(&[
        "train",
        "--data",
        "d.csv",
        "--target",
        "y",
        "--inputs",
        "x1,x2",
        "--out",
        "m.json",
        "--hidden",
        "1..2",
        "--restarts",
        "1",
        "--quiet",
    ]);
    w.ok(&[
        "report",
        "--model",
        "m.json",
        "--validation",
        "cv.json",
        "--out",
        "r.html",
    ]);
    let html = String::from_utf8(w.read("r.html")).expect("utf-8");
    assert!(html.contains("<section id=\"validation\">"));
    assert!(html.contains("fig-validation-y"));
}

#[test]
fn validate_refuses_more_folds_than_groups_and_unknown_group() {
    let w = Workdir::new();
    w.write("d.csv", grouped_fixture(12));
    let args = [
        "validate", "--data", "d.csv", "--target", "y", "--folds", "5", "--group", "heat",
        "--quiet",
    ];
    let out = w.fails(&args, 2);
    assert!(
        String::from_utf8_lossy(&out.stderr).contains("folds"),
        "{}",
        describe(&args, &out)
    );
    let args = [
        "validate", "--data", "d.csv", "--target", "y", "--group", "furnace", "--quiet",
    ];
    let out = w.fails(&args, 2);
    assert!(
        String::from_utf8_lossy(&out.stderr).contains("furnace"),
        "{}",
        describe(&args, &out)
    );
    assert!(stdout(&out).is_empty());
}

/// The schema's `group` key does what `--group` does (docs/schema.md), and
/// a group that names no identifier column is refused naming it.
#[test]
fn validate_takes_the_group_column_from_the_schema() {
    let w = Workdir::new();
    w.write("d.csv", grouped_fixture(60));
    let schema = |group: &str, role: &str| {
        format!(
            "mettle_schema = 1\ngroup = \"{group}\"\n\n\
             [[column]]\nname = \"heat\"\nrole = \"{role}\"\n{}\n\
             [[column]]\nname = \"x1\"\nrole = \"input\"\nunit = \"1\"\n\n\
             [[column]]\nname = \"x2\"\nrole = \"input\"\nunit = \"1\"\n\n\
             [[column]]\nname = \"y\"\nrole = \"target\"\nunit = \"1\"\n",
            if role == "input" {
                "unit = \"1\"\n"
            } else {
                ""
            }
        )
    };
    w.write("s.toml", schema("heat", "identifier"));
    let mut args = vec![
        "validate", "--data", "d.csv", "--schema", "s.toml", "--folds", "4", "--format", "json",
        "--rows", "oof.xlsx",
    ];
    args.extend(SMALL);
    let out = w.ok(&args);
    let v: Value = serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|e| panic!("not JSON ({e})\n{}", describe(&args, &out)));
    assert_eq!(v["n_groups"], 20, "{}", describe(&args, &out));
    assert_eq!(v["group"], "heat", "{}", describe(&args, &out));
    // the out-of-fold rows as a workbook, read back (calamine, through
    // mettle's own reader): one row per data row, the numbers of the JSON
    let book = mettle::data::Table::read(&w.path("oof.xlsx")).expect("the workbook reads");
    assert_eq!(book.n_rows(), 60);
    let rows = v["targets"][0]["rows"].as_array().expect("rows");
    let means = book.numeric("mean").expect("mean column");
    for (r, m) in rows.iter().zip(&means) {
        let want = r["mean"].as_f64().expect("mean");
        assert!(
            (m - want).abs() <= 1e-12 * want.abs().max(1.0),
            "{m} vs {want}"
        );
    }

    for (group, role, said) in [
        ("furnace", "identifier", "names no declared column"),
        ("heat", "input", "has role input"),
    ] {
        w.write("bad.toml", schema(group, role));
        let args = [
            "validate", "--data", "d.csv", "--schema", "bad.toml", "--quiet",
        ];
        let out = w.fails(&args, 2);
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(
            err.contains("bad.toml") && err.contains(said),
            "{}",
            describe(&args, &out)
        );
    }
}
