//! The bad-input corpus (issue 8, point 1; docs/reliability.md lists it):
//! every case runs the real binary and must exit with its documented code
//! (2 for bad input or usage, 1 for a failure while running), say what is
//! wrong naming the file (and row and column where there is one), leave
//! every file in its working directory as it was (no output written, no
//! earlier output changed, no temporary file left), and never panic.
//!
//! A second table holds awkward but valid inputs, which must work, with a
//! warning where something was set aside.
//!
//! All tables are invented (tests/common/mod.rs). The expected behaviour is
//! the project's own contract (src/main.rs, docs/reliability.md).

mod common;

use std::collections::BTreeMap;
use std::process::Output;

use common::{
    describe, fixture_csv, fixture_truth, set_cell, stderr, weld_csv, weld_schema, welds,
    with_rows, Workdir, INTERNAL_UNITS, US_SHEET_UNITS,
};
use serde_json::Value;

/// Train settings small enough for a test: the input handling is under
/// test, not the networks.
const QUICK: [&str; 5] = ["--hidden", "1..2", "--restarts", "1", "--quiet"];

/// One refused input: files to lay out, the command, the exit code and the
/// words its message must hold.
struct Case {
    name: &'static str,
    files: Vec<(&'static str, Vec<u8>)>,
    args: Vec<String>,
    code: i32,
    want: Vec<String>,
}

/// A workbook holding `csv` (numbers as numbers) in a sheet `sheet`.
fn workbook_bytes(sheet: &str, csv: &str) -> Vec<u8> {
    common::workbook_bytes(sheet, csv, None)
}

fn case(
    name: &'static str,
    files: Vec<(&'static str, Vec<u8>)>,
    args: Vec<String>,
    code: i32,
    want: &[&str],
) -> Case {
    Case {
        name,
        files,
        args,
        code,
        want: want.iter().map(|s| s.to_string()).collect(),
    }
}

fn strings(v: &[&str]) -> Vec<String> {
    v.iter().map(|s| s.to_string()).collect()
}

/// `mettle train --data DATA --target y --out m.json` with quick settings.
fn train(data: &str) -> Vec<String> {
    let mut v = strings(&["train", "--data", data, "--target", "y", "--out", "m.json"]);
    v.extend(strings(&QUICK));
    v
}

/// `mettle train --data DATA --target TARGET --out m.json`, quick settings.
fn train_with_target(data: &str, target: &str) -> Vec<String> {
    let mut v = strings(&[
        "train", "--data", data, "--target", target, "--out", "m.json",
    ]);
    v.extend(strings(&QUICK));
    v
}

/// As [`train`] with `extra` arguments.
fn train_with(data: &str, extra: &[&str]) -> Vec<String> {
    let mut v = train(data);
    v.extend(strings(extra));
    v
}

/// `mettle train --data DATA --schema SCHEMA --out m.json`, quick settings.
fn train_schema(data: &str, schema: &str) -> Vec<String> {
    let mut v = strings(&[
        "train", "--data", data, "--schema", schema, "--out", "m.json",
    ]);
    v.extend(strings(&QUICK));
    v
}

/// `mettle predict --model MODEL --input INPUT --format csv --out est.csv`.
fn predict(model: &str, input: &str) -> Vec<String> {
    strings(&[
        "predict", "--model", model, "--input", input, "--format", "csv", "--out", "est.csv",
    ])
}

fn bytes(s: impl AsRef<[u8]>) -> Vec<u8> {
    s.as_ref().to_vec()
}

/// The fixture table (x1, x2, y) with its lines edited by `edit` (header
/// first).
fn edited(n: usize, edit: impl FnOnce(&mut Vec<String>)) -> Vec<u8> {
    let mut lines: Vec<String> = fixture_csv(n, 3).lines().map(str::to_string).collect();
    edit(&mut lines);
    bytes(lines.join("\n") + "\n")
}

/// The weld table of tests/common with cell `col` of data row `row` set to
/// `cell`.
fn weld_with(row: usize, col: &str, cell: &str) -> Vec<u8> {
    let mut lines: Vec<String> = weld_csv(&welds(40, 11), &INTERNAL_UNITS)
        .lines()
        .map(str::to_string)
        .collect();
    set_cell(&mut lines, row, col, cell);
    bytes(lines.join("\n") + "\n")
}

/// The weld schema of tests/common with `from` replaced by `to` (which
/// must change it).
fn schema_with(from: &str, to: &str) -> Vec<u8> {
    let s = weld_schema(&INTERNAL_UNITS);
    assert!(s.contains(from), "schema has no {from:?}");
    bytes(s.replacen(from, to, 1))
}

/// A model file edited as JSON by `edit`.
fn tampered(model: &[u8], edit: impl FnOnce(&mut Value)) -> Vec<u8> {
    let mut v: Value = serde_json::from_slice(model).expect("model JSON");
    edit(&mut v);
    serde_json::to_vec(&v).expect("serialise")
}

fn member0(v: &mut Value) -> &mut Value {
    &mut v["targets"][0]["committee"]["members"][0]
}

/// Every file of the directory with its bytes.
fn snapshot(w: &Workdir) -> BTreeMap<String, Vec<u8>> {
    w.entries()
        .into_iter()
        .filter(|n| w.path(n).is_file())
        .map(|n| {
            let b = w.read(&n);
            (n, b)
        })
        .collect()
}

/// True when the run panicked (exit 101 or a panic message).
fn panicked(out: &Output) -> bool {
    out.status.code() == Some(101) || stderr(out).contains("panicked")
}

/// Run one case: the reasons it fails, if any, and its row of the table in
/// docs/reliability.md (case, exit code, message).
fn check(c: &Case) -> (Option<String>, String) {
    let w = Workdir::new();
    for (name, b) in &c.files {
        w.write(name, b);
    }
    let before = snapshot(&w);
    let args: Vec<&str> = c.args.iter().map(String::as_str).collect();
    let out = w.run(&args);
    let mut problems = Vec::new();
    if panicked(&out) {
        problems.push("it panicked".to_string());
    }
    if out.status.code() != Some(c.code) {
        problems.push(format!(
            "exit code {:?}, expected {}",
            out.status.code(),
            c.code
        ));
    }
    let err = stderr(&out);
    for part in &c.want {
        if !err.contains(part.as_str()) {
            problems.push(format!("message lacks {part:?}"));
        }
    }
    if snapshot(&w) != before {
        problems.push(format!(
            "files changed: before {:?}, after {:?}",
            before.keys().collect::<Vec<_>>(),
            w.entries()
        ));
    }
    let row = format!(
        "| {} | {} | `{}` |",
        c.name,
        out.status.code().map_or("signal".into(), |k| k.to_string()),
        err.lines()
            .find(|l| l.starts_with("mettle: error") || l.starts_with("error:"))
            .unwrap_or("")
            .replace('|', "\\|")
    );
    let failure = (!problems.is_empty()).then(|| {
        format!(
            "case '{}': {}\n{}",
            c.name,
            problems.join("; "),
            describe(&args, &out)
        )
    });
    (failure, row)
}

/// Models the model-file cases start from: one trained on the fixture
/// (x1, x2, y), one on the weld table through its schema.
struct Models {
    plain: Vec<u8>,
    weld: Vec<u8>,
}

fn models() -> Models {
    let w = Workdir::new();
    w.write("train.csv", fixture_csv(60, 1));
    let mut a = strings(&[
        "train",
        "--data",
        "train.csv",
        "--target",
        "y",
        "--out",
        "plain.json",
    ]);
    a.extend(strings(&QUICK));
    w.ok(&a.iter().map(String::as_str).collect::<Vec<_>>());
    w.write("weld.toml", weld_schema(&INTERNAL_UNITS));
    w.write("welds.csv", weld_csv(&welds(40, 11), &INTERNAL_UNITS));
    let mut a = strings(&[
        "train",
        "--data",
        "welds.csv",
        "--schema",
        "weld.toml",
        "--out",
        "weld.json",
    ]);
    a.extend(strings(&QUICK));
    w.ok(&a.iter().map(String::as_str).collect::<Vec<_>>());
    Models {
        plain: w.read("plain.json"),
        weld: w.read("weld.json"),
    }
}

/// Rows to estimate with the plain model.
const QUERY: &str = "x1,x2\n0.1,0.5\n-0.3,1.2\n";

/// An earlier output that a refused run must leave alone.
const EARLIER: &[u8] = b"estimates of an earlier run\n";

fn corpus(m: &Models) -> Vec<Case> {
    let fx = || bytes(fixture_csv(40, 3));
    let schema = || bytes(weld_schema(&INTERNAL_UNITS));
    let weld = || bytes(weld_csv(&welds(40, 11), &INTERNAL_UNITS));
    let plain = || m.plain.clone();
    let query = || bytes(QUERY);
    let model_case = |name, model: Vec<u8>, want: &[&str]| {
        case(
            name,
            vec![
                ("m.json", model),
                ("q.csv", query()),
                ("est.csv", bytes(EARLIER)),
            ],
            predict("m.json", "q.csv"),
            2,
            want,
        )
    };
    vec![
        // ---- the shape of the CSV file
        case(
            "empty file",
            vec![("d.csv", vec![])],
            train("d.csv"),
            2,
            &["d.csv", "empty"],
        ),
        case(
            "only blank lines",
            vec![("d.csv", bytes("\n\n\n"))],
            train("d.csv"),
            2,
            &["d.csv"],
        ),
        case(
            "header only",
            vec![("d.csv", bytes("x1,x2,y\n"))],
            train("d.csv"),
            2,
            &["d.csv", "header (x1, x2, y) but no data rows"],
        ),
        case(
            "ragged row, one cell too many",
            vec![("d.csv", edited(40, |l| l[12].push_str(",7.5")))],
            train("d.csv"),
            2,
            &["d.csv", "row 12 (line 13)", "4 cells", "header has 3"],
        ),
        case(
            "ragged row, one cell short",
            vec![(
                "d.csv",
                edited(40, |l| {
                    let cut = l[9].rfind(',').expect("a comma");
                    l[9].truncate(cut);
                }),
            )],
            train("d.csv"),
            2,
            &["d.csv", "row 9 (line 10)", "no cell for column 'y'"],
        ),
        case(
            "unterminated quote",
            vec![("d.csv", edited(40, |l| l[5] = format!("\"{}", l[5])))],
            train("d.csv"),
            2,
            &["d.csv"],
        ),
        case(
            "quote inside a number",
            vec![(
                "d.csv",
                edited(40, |l| l[6] = l[6].replacen(',', ",1\"2", 1)),
            )],
            train("d.csv"),
            2,
            &["d.csv", "row 6"],
        ),
        case(
            "semicolon delimiter",
            vec![("d.csv", bytes(fixture_csv(40, 3).replace(',', ";")))],
            train("d.csv"),
            2,
            &["d.csv", "'x1;x2;y'", "semicolon", "comma-separated"],
        ),
        case(
            "tab delimiter",
            vec![("d.csv", bytes(fixture_csv(40, 3).replace(',', "\t")))],
            train("d.csv"),
            2,
            &["d.csv", "separated by tab"],
        ),
        case(
            "decimal comma in quotes",
            vec![("d.csv", edited(40, |l| l[3] = "\"0,25\",1.0,2.0".into()))],
            train("d.csv"),
            2,
            &["d.csv", "row 3", "column 'x1'", "'0,25'"],
        ),
        case(
            "binary garbage",
            vec![(
                "d.csv",
                (0u8..=255).cycle().take(3000).map(|b| b.wrapping_mul(37)).collect(),
            )],
            train("d.csv"),
            2,
            &["d.csv"],
        ),
        case(
            "a truncated Parquet file",
            vec![("d.parquet", {
                let mut b = bytes("PAR1");
                b.extend([0x15, 0x04, 0x15, 0x80, 0x01]);
                b
            })],
            train("d.parquet"),
            2,
            &["d.parquet"],
        ),
        case(
            "Parquet metadata the decoder panics on (found by tests/fuzz.rs)",
            vec![(
                "d.parquet",
                bytes(include_bytes!("corpus/found/parquet_bad_metadata.parquet")),
            )],
            train("d.parquet"),
            2,
            &["d.parquet", "Parquet file is damaged"],
        ),
        case(
            "a Parquet page header with a negative value count (found by tests/fuzz.rs; polars aborted on it)",
            vec![(
                "d.parquet",
                bytes(include_bytes!(
                    "corpus/found/parquet_negative_page_count.parquet"
                )),
            )],
            train("d.parquet"),
            2,
            &[
                "d.parquet",
                "Parquet file is damaged",
                "row group 1",
                "'cu_wt'",
                "a count of -31",
            ],
        ),
        case(
            "data file does not exist",
            vec![],
            train("absent.csv"),
            2,
            &["absent.csv", "cannot read"],
        ),
        case(
            "data path is a directory",
            vec![],
            train("."),
            2,
            &["cannot read"],
        ),
        // ---- the cells
        case(
            "text in the target",
            vec![("d.csv", edited(40, |l| l[8] = "0.1,0.2,high".into()))],
            train("d.csv"),
            2,
            &["d.csv", "row 8", "column 'y'", "'high'"],
        ),
        case(
            "NaN in the target",
            vec![("d.csv", edited(40, |l| l[8] = "0.1,0.2,NaN".into()))],
            train("d.csv"),
            2,
            &["d.csv", "row 8", "column 'y'", "not a finite number"],
        ),
        case(
            "overflow to infinity (1e999)",
            vec![("d.csv", edited(40, |l| l[20] = "1e999,0.2,1.0".into()))],
            train("d.csv"),
            2,
            &["d.csv", "row 20", "column 'x1'", "not a finite number"],
        ),
        case(
            "-inf in an input",
            vec![("d.csv", edited(40, |l| l[2] = "0.3,-inf,1.0".into()))],
            train("d.csv"),
            2,
            &["d.csv", "row 2", "column 'x2'", "not a finite number"],
        ),
        case(
            "hexadecimal number",
            vec![("d.csv", edited(40, |l| l[4] = "0x1F,0.2,1.0".into()))],
            train("d.csv"),
            2,
            &["d.csv", "row 4", "column 'x1'", "'0x1F'"],
        ),
        case(
            "empty input cell without a schema",
            vec![("d.csv", edited(40, |l| l[11] = "0.3,,1.0".into()))],
            train("d.csv"),
            2,
            &["d.csv", "row 11", "column 'x2'"],
        ),
        // ---- the columns
        case(
            "target column missing",
            vec![("d.csv", fx())],
            strings(&[
                "train", "--data", "d.csv", "--target", "uts", "--out", "m.json",
            ]),
            2,
            &["d.csv", "'uts'", "x1, x2, y"],
        ),
        case(
            "input column missing",
            vec![("d.csv", fx())],
            train_with("d.csv", &["--inputs", "x1,x3"]),
            2,
            &["d.csv", "'x3'"],
        ),
        case(
            "duplicated column name",
            vec![("d.csv", edited(40, |l| l[0] = "x1,x1,y".into()))],
            train("d.csv"),
            2,
            &["d.csv", "'x1'", "twice", "columns 1 and 2"],
        ),
        case(
            "empty column name",
            vec![("d.csv", edited(40, |l| l[0] = "x1,,y".into()))],
            train("d.csv"),
            2,
            &["d.csv", "column 2", "empty name"],
        ),
        case(
            "target given as an input too",
            vec![("d.csv", fx())],
            train_with("d.csv", &["--inputs", "x1,y"]),
            2,
            &["inputs", "y"],
        ),
        // ---- too little to learn from
        case(
            "constant target",
            vec![(
                "d.csv",
                edited(40, |l| {
                    for line in l.iter_mut().skip(1) {
                        let cut = line.rfind(',').expect("a comma");
                        line.truncate(cut);
                        line.push_str(",7.25");
                    }
                }),
            )],
            train("d.csv"),
            2,
            &["d.csv", "'y'", "7.25", "same value"],
        ),
        case(
            "every input constant",
            vec![("d.csv", bytes("x1,x2,y\n1,2,3\n1,2,4\n1,2,5\n1,2,3.5\n1,2,4.5\n1,2,3.2\n"))],
            train("d.csv"),
            2,
            &["d.csv", "no usable input", "x1", "x2", "constant"],
        ),
        case(
            "three rows",
            vec![("d.csv", bytes("x1,x2,y\n0.1,0.2,1\n0.4,0.1,2\n0.3,0.9,1.5\n"))],
            train("d.csv"),
            2,
            &["d.csv", "3 usable rows", "at least"],
        ),
        case(
            "fewer rows than inputs",
            vec![(
                "d.csv",
                bytes("a,b,c,d,e,f,y\n1,2,3,4,5,6,1\n2,1,4,3,6,5,2\n3,3,1,2,4,6,3\n4,5,2,1,3,4,4\n5,4,6,5,1,2,5\n"),
            )],
            train("d.csv"),
            2,
            &["d.csv", "5 usable rows", "6 inputs"],
        ),
        // ---- compositions and units (through a schema)
        case(
            "negative silicon (auxiliary column)",
            vec![("w.csv", weld_with(5, "si", "-0.2")), ("w.toml", schema())],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.csv", "row 5", "column 'si'", "-0.2"],
        ),
        case(
            "manganese above 100 wt%",
            vec![("w.csv", weld_with(17, "mn", "120")), ("w.toml", schema())],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.csv", "row 17", "mn", "100 wt%"],
        ),
        case(
            "carbon above its declared maximum",
            vec![("w.csv", weld_with(3, "c", "0.9")), ("w.toml", schema())],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.csv", "row 3", "column 'c'", "0.9", "0.5"],
        ),
        case(
            "a pressure unit for a content",
            vec![
                ("w.csv", weld()),
                ("w.toml", schema_with("unit = \"wt%\"\nstands_for = \"C\"", "unit = \"MPa\"\nstands_for = \"C\"")),
            ],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.toml", "'c'", "MPa"],
        ),
        case(
            "misspelt unit",
            vec![("w.csv", weld()), ("w.toml", schema_with("unit = \"kJ/mm\"", "unit = \"kJ/mn\""))],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.toml", "kJ/mn"],
        ),
        case(
            "unknown role",
            vec![("w.csv", weld()), ("w.toml", schema_with("role = \"auxiliary\"", "role = \"helper\""))],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.toml", "helper"],
        ),
        case(
            "schema from the future",
            vec![("w.csv", weld()), ("w.toml", schema_with("mettle_schema = 1", "mettle_schema = 99"))],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.toml", "99"],
        ),
        case(
            "schema without a target",
            vec![("w.csv", weld()), ("w.toml", schema_with("role = \"target\"", "role = \"ignore\""))],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.toml", "target"],
        ),
        case(
            "column declared twice",
            vec![
                ("w.csv", weld()),
                ("w.toml", schema_with("name = \"si\"", "name = \"c\"")),
            ],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.toml", "'c'"],
        ),
        case(
            "bounds the wrong way round",
            vec![("w.csv", weld()), ("w.toml", schema_with("min = 0.0\nmax = 0.5", "min = 0.5\nmax = 0.0"))],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.toml", "'c'", "0.5"],
        ),
        case(
            "schema is not TOML",
            vec![("w.csv", weld()), ("w.toml", bytes("[[column]\nname = c\n"))],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.toml"],
        ),
        case(
            "declared column absent from the table",
            vec![
                ("w.csv", weld()),
                ("w.toml", schema_with("name = \"mn\"", "name = \"mn_wt\"")),
            ],
            train_schema("w.csv", "w.toml"),
            2,
            &["w.csv", "'mn_wt'", "w.toml"],
        ),
        // ---- model files
        model_case("empty model file", vec![], &["m.json", "truncated"]),
        model_case(
            "model cut after 40 bytes",
            plain()[..40].to_vec(),
            &["m.json", "truncated"],
        ),
        model_case(
            "a weight changed to text",
            tampered(&m.plain, |v| member0(v)["weights"][0] = Value::from("0.5")),
            &["m.json", "not a usable mettle model"],
        ),
        model_case(
            "a weight removed",
            tampered(&m.plain, |v| {
                member0(v)["weights"].as_array_mut().expect("weights").pop();
            }),
            &["m.json", "weights, expected"],
        ),
        model_case(
            "a noise network of the wrong size",
            tampered(&m.plain, |v| {
                let m0 = member0(v);
                m0["noise"] = serde_json::json!({
                    "n_hidden": 2, "groups": [], "alpha": [], "gamma": [],
                    "weights": [0.1, 0.2], "posterior_cov": [1.0],
                    "diagnostics": m0["diagnostics"].clone()
                });
            }),
            &["m.json", "member 1", "noise network"],
        ),
        model_case(
            "a member with a negative noise precision",
            tampered(&m.plain, |v| member0(v)["beta"] = Value::from(-1.0)),
            &["m.json", "member 1"],
        ),
        model_case(
            "an input scaling of zero width",
            tampered(&m.plain, |v| {
                let lo = v["inputs"][0]["scaling"]["lo"].clone();
                v["inputs"][0]["scaling"]["hi"] = lo;
            }),
            &["m.json", "scaling"],
        ),
        model_case(
            "model format version from a newer mettle",
            tampered(&m.plain, |v| {
                v["format_version"] = Value::from(mettle::model::MODEL_FORMAT_VERSION + 1)
            }),
            &["m.json", "newer", "upgrade"],
        ),
        model_case(
            "another program's JSON",
            bytes("[1, 2, 3]\n"),
            &["m.json", "not a mettle model"],
        ),
        model_case(
            "a schema given as the model",
            schema(),
            &["m.json", "not valid JSON"],
        ),
        // ---- model and table disagree
        case(
            "input table lacks a model input",
            vec![("m.json", plain()), ("q.csv", bytes("x1,x3\n0.1,0.5\n"))],
            predict("m.json", "q.csv"),
            2,
            &["q.csv", "'x2'"],
        ),
        case(
            "text where the model needs a number",
            vec![("m.json", plain()), ("q.csv", bytes("x1,x2\n0.1,0.5\n0.2,n/a\n")), ("est.csv", bytes(EARLIER))],
            predict("m.json", "q.csv"),
            2,
            &["q.csv", "row 2", "column 'x2'", "'n/a'"],
        ),
        case(
            "NaN where the model needs a number",
            vec![("m.json", plain()), ("q.csv", bytes("x1,x2\nNaN,0.5\n"))],
            predict("m.json", "q.csv"),
            2,
            &["q.csv", "row 1", "column 'x1'"],
        ),
        case(
            "weld table with the heat input in J/mm under another name",
            vec![(
                "m.json",
                m.weld.clone(),
            ), (
                "q.csv",
                bytes(weld_csv(&welds(5, 4), &INTERNAL_UNITS).replace("heat_input", "heat_input_j_mm")),
            )],
            predict("m.json", "q.csv"),
            2,
            &["q.csv", "'heat_input'"],
        ),
        case(
            "an input table with no rows",
            vec![("m.json", plain()), ("q.csv", bytes("x1,x2\n")), ("est.csv", bytes(EARLIER))],
            predict("m.json", "q.csv"),
            2,
            &["q.csv", "no data rows"],
        ),
        case(
            "evaluate on a table without the target",
            vec![("m.json", plain()), ("q.csv", query())],
            strings(&["evaluate", "--model", "m.json", "--data", "q.csv"]),
            2,
            &["q.csv", "'y'"],
        ),
        // ---- a real archive's workflow: names, spreadsheets, units, messages
        case(
            "a target name wrongly cased",
            vec![("d.csv", fx())],
            train_with_target("d.csv", "Y"),
            2,
            &["d.csv", "no column named 'Y'", "did you mean 'y'"],
        ),
        case(
            "a target name misspelt",
            vec![("d.csv", bytes(fixture_csv(40, 3).replacen("y\n", "uts_mpa\n", 1)))],
            train_with_target("d.csv", "uts_mpx"),
            2,
            &["d.csv", "'uts_mpx'", "did you mean 'uts_mpa'"],
        ),
        case(
            "numbers written with a decimal comma",
            vec![("d.csv", bytes("x1,x2,y\n0,5,1,25,2,5\n0,1,0,5,1,0\n"))],
            train("d.csv"),
            2,
            &["d.csv", "row 1 (line 2)", "6 cells, but the header has 3", "decimal comma"],
        ),
        case(
            "a model file that is not there",
            vec![("q.csv", query())],
            predict("nope.json", "q.csv"),
            2,
            &["the model file nope.json", "nope.json: cannot read"],
        ),
        case(
            "a heat without an input value at prediction",
            vec![
                ("m.json", m.weld.clone()),
                ("q.csv", weld_with(2, "mn", "")),
            ],
            predict("m.json", "q.csv"),
            2,
            &["q.csv", "input values are missing", "complete rows only"],
        ),
        case(
            "a column in another unit than the model's, undeclared (J/mm under a kJ/mm name)",
            vec![
                ("m.json", m.weld.clone()),
                ("q.csv", bytes(weld_csv(&welds(6, 12), &US_SHEET_UNITS))),
            ],
            predict("m.json", "q.csv"),
            2,
            &["q.csv", "column heat_input", "inside it read as J/mm", "Declare its unit in the header"],
        ),
        case(
            "a damaged spreadsheet workbook given as the table",
            vec![("d.xlsx", b"PK\x03\x04\x14\x00\x06\x00\x08\x00binary zip content".to_vec())],
            train("d.xlsx"),
            2,
            &["d.xlsx", "cannot open the workbook"],
        ),
        case(
            "a workbook without the sheet named",
            vec![("d.xlsx", workbook_bytes("welds", &fixture_csv(40, 3)))],
            {
                let mut v = train("d.xlsx");
                v.extend(strings(&["--sheet", "Welds"]));
                v
            },
            2,
            &["d.xlsx", "no sheet named 'Welds'", "did you mean 'welds'", "the sheets are: welds"],
        ),
        case(
            "a sheet named for a CSV file",
            vec![("d.csv", fx())],
            {
                let mut v = train("d.csv");
                v.extend(strings(&["--sheet", "welds"]));
                v
            },
            2,
            &["d.csv", "not a spreadsheet workbook"],
        ),
        case(
            "an identifier column that is not there",
            vec![("m.json", plain()), ("q.csv", query())],
            {
                let mut v = predict("m.json", "q.csv");
                v.extend(strings(&["--id", "X1"]));
                v
            },
            2,
            &["q.csv", "no column named 'X1'", "did you mean 'x1'"],
        ),
        case(
            "a schema target that the schema does not declare",
            vec![("w.csv", weld()), ("w.toml", schema())],
            {
                let mut v = train_schema("w.csv", "w.toml");
                v.extend(strings(&["--target", "UTS"]));
                v
            },
            2,
            &["w.toml", "declares no target 'UTS'", "did you mean 'uts'"],
        ),
        // ---- where the output goes
        case(
            "train into a directory that does not exist",
            vec![("d.csv", fx())],
            {
                let mut v = strings(&[
                    "train", "--data", "d.csv", "--target", "y", "--out", "nowhere/m.json",
                ]);
                v.extend(strings(&QUICK));
                v
            },
            1,
            &["nowhere/m.json", "cannot write"],
        ),
        case(
            "predict out onto a directory",
            vec![("m.json", plain()), ("q.csv", query())],
            strings(&["predict", "--model", "m.json", "--input", "q.csv", "--out", "."]),
            1,
            &["cannot write"],
        ),
        // ---- usage
        case(
            "hidden range the wrong way round",
            vec![("d.csv", fx())],
            strings(&[
                "train", "--data", "d.csv", "--target", "y", "--out", "m.json", "--hidden", "5..2",
            ]),
            2,
            &["hidden", "5..2"],
        ),
        case(
            "holdout share too large",
            vec![("d.csv", fx())],
            strings(&[
                "train", "--data", "d.csv", "--target", "y", "--out", "m.json", "--holdout", "0.9",
            ]),
            2,
            &["holdout", "0.9", "0.5"],
        ),
        case(
            "unknown option",
            vec![("d.csv", fx())],
            strings(&["train", "--data", "d.csv", "--target", "y", "--out", "m.json", "--epochs", "5"]),
            2,
            &["--epochs"],
        ),
    ]
}

#[test]
fn every_bad_input_is_refused_with_its_code_and_a_message_and_no_file() {
    let m = models();
    let cases = corpus(&m);
    assert!(cases.len() >= 40, "{} cases", cases.len());
    let mut names: Vec<&str> = cases.iter().map(|c| c.name).collect();
    names.sort_unstable();
    names.dedup();
    assert_eq!(names.len(), cases.len(), "case names repeat");
    // two at a time: the binary is single-threaded on these small inputs
    let results: Vec<(usize, (Option<String>, String))> = std::thread::scope(|s| {
        let halves: Vec<_> = (0..2)
            .map(|k| {
                let cases = &cases;
                s.spawn(move || {
                    (k..cases.len())
                        .step_by(2)
                        .map(|i| (i, check(&cases[i])))
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        halves
            .into_iter()
            .flat_map(|h| h.join().expect("a checking thread"))
            .collect()
    });
    let mut rows: Vec<(usize, String)> = results.iter().map(|(i, r)| (*i, r.1.clone())).collect();
    rows.sort();
    // METTLE_CORPUS_TABLE=FILE writes the table of docs/reliability.md
    if let Some(path) = std::env::var_os("METTLE_CORPUS_TABLE") {
        let table: Vec<String> = rows.into_iter().map(|r| r.1).collect();
        std::fs::write(path, table.join("\n") + "\n").expect("write the corpus table");
    }
    let failures: Vec<String> = results.into_iter().filter_map(|(_, r)| r.0).collect();
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n\n{}",
        failures.len(),
        cases.len(),
        failures.join("\n\n")
    );
}

// ---------------------------------------------------------------------
// awkward but valid

fn json_rows(w: &Workdir, model: &str, input: &str) -> Vec<Value> {
    let out = w.ok(&[
        "predict", "--model", model, "--input", input, "--format", "json",
    ]);
    common::predict_rows(&out.stdout)
}

fn trained_ok(w: &Workdir, data: &str, extra: &[&str]) -> (Value, String) {
    let mut args = vec!["train", "--data", data, "--target", "y", "--out", "m.json"];
    args.extend(["--hidden", "1..2", "--restarts", "1"]);
    args.extend(extra);
    let out = w.ok(&args);
    let model: Value = serde_json::from_slice(&w.read("m.json")).expect("model JSON");
    (model, stderr(&out))
}

fn input_names(model: &Value) -> Vec<String> {
    model["inputs"]
        .as_array()
        .expect("inputs")
        .iter()
        .map(|i| i["name"].as_str().expect("name").to_string())
        .collect()
}

fn set_aside(model: &Value) -> Vec<(String, String)> {
    model["set_aside"]
        .as_array()
        .expect("set_aside")
        .iter()
        .map(|s| {
            (
                s["name"].as_str().expect("name").to_string(),
                s["reason"].as_str().expect("reason").to_string(),
            )
        })
        .collect()
}

#[test]
fn a_byte_order_mark_and_crlf_line_ends_are_read_as_spreadsheets_write_them() {
    let w = Workdir::new();
    let crlf = |s: String| format!("\u{feff}{}", s.replace('\n', "\r\n"));
    w.write("d.csv", crlf(fixture_csv(60, 5)));
    w.write("q.csv", crlf(QUERY.to_string()));
    let (model, _) = trained_ok(&w, "d.csv", &[]);
    assert_eq!(input_names(&model), ["x1", "x2"]);
    let rows = json_rows(&w, "m.json", "q.csv");
    assert_eq!(rows.len(), 2);
}

#[test]
fn a_constant_input_is_set_aside_named_in_the_warning_and_recorded() {
    let w = Workdir::new();
    let text = with_rows(&fixture_csv(60, 6), "x1,furnace,x2,y", |v| {
        format!("{},3,{},{}", v[0], v[1], v[2])
    });
    w.write("d.csv", text);
    let (model, err) = trained_ok(&w, "d.csv", &[]);
    assert!(
        err.contains("'furnace'") && err.contains("constant"),
        "{err}"
    );
    assert_eq!(input_names(&model), ["x1", "x2"]);
    let aside = set_aside(&model);
    assert_eq!(aside.len(), 1);
    assert_eq!(aside[0].0, "furnace");
    assert!(aside[0].1.contains("constant"), "{aside:?}");
}

/// The fixture with a third input computed from x1 by `f`.
fn with_copy(seed: u64, f: impl Fn(f64) -> f64) -> String {
    with_rows(&fixture_csv(60, seed), "x1,x1_copy,x2,y", |v| {
        format!("{},{},{},{}", v[0], f(v[0]), v[1], v[2])
    })
}

#[test]
fn duplicated_and_collinear_inputs_are_set_aside_with_a_warning() {
    for (what, f, word) in [
        ("a copy", (|x| x) as fn(f64) -> f64, "copy of 'x1'"),
        ("collinear", |x| 2.5 * x - 4.0, "collinear with 'x1'"),
    ] {
        let w = Workdir::new();
        w.write("d.csv", with_copy(7, f));
        let (model, err) = trained_ok(&w, "d.csv", &[]);
        assert!(
            err.contains("'x1_copy'") && err.contains(word),
            "{what}: {err}"
        );
        assert_eq!(input_names(&model), ["x1", "x2"], "{what}");
        let aside = set_aside(&model);
        assert_eq!(aside.len(), 1, "{what}: {aside:?}");
        assert!(aside[0].1.contains(word), "{what}: {aside:?}");
        // the model still predicts from a table that holds the copy or not
        w.write("q.csv", QUERY);
        assert_eq!(json_rows(&w, "m.json", "q.csv").len(), 2);
    }
}

#[test]
fn inputs_of_1e12_and_1e_minus_12_are_scaled_and_learnt() {
    // x1 written in units 1e12 times larger, x2 in units 1e12 times
    // smaller: scaling to the training range must make this the same
    // problem as the fixture; the estimates are checked against the
    // fixture's own noise-free function
    let w = Workdir::new();
    let scaled = with_rows(&fixture_csv(150, 8), "x1,x2,y", |v| {
        format!("{:e},{:e},{}", v[0] * 1e12, v[1] * 1e-12, v[2])
    });
    w.write("d.csv", scaled);
    let probes = [(-0.6, 0.4), (0.0, 1.0), (0.5, 1.7)];
    let q: String = std::iter::once("x1,x2\n".to_string())
        .chain(
            probes
                .iter()
                .map(|(a, b)| format!("{:e},{:e}\n", a * 1e12, b * 1e-12)),
        )
        .collect();
    w.write("q.csv", q);
    let mut args = vec![
        "train", "--data", "d.csv", "--target", "y", "--out", "m.json",
    ];
    args.extend(["--hidden", "2..4", "--restarts", "1", "--quiet"]);
    w.ok(&args);
    let rows = json_rows(&w, "m.json", "q.csv");
    for ((a, b), r) in probes.iter().zip(&rows) {
        let est = r["mean"].as_f64().expect("mean");
        let truth = fixture_truth(*a, *b);
        // the fixture's noise sd is 0.2; a committee on 150 rows lands
        // well within 4 of them at points inside the data
        assert!(
            (est - truth).abs() < 0.8,
            "at ({a}, {b}): estimate {est}, truth {truth}"
        );
    }
}
