//! Spreadsheets and units at prediction time, through the real binary
//! (the archive-workflow issue): .xlsx in (any sheet) and out (a third
//! format of the estimate writer, beside CSV and JSON), and a table of new
//! heats that declares its units in its headers.
//!
//! Workbooks are written here with rust_xlsxwriter and read back with
//! calamine (the crates mettle itself uses, checked against each other and
//! against the CSV path). Unit conversions are checked against the exact
//! definitions: °F = 1.8·°C + 32 and K = °C + 273.15 (NIST SP 811, §B.8;
//! BIPM SI Brochure, 9th ed., §2.3.1), 1 wt% = 10 000 ppm by mass.

mod common;

use calamine::{open_workbook_auto, Data, Reader};
use common::{describe, fixture_csv, same_up_to_rounding, stderr, stdout, Workdir};
use serde_json::Value;

/// Write `csv` (header + rows, numbers stored as numbers) as sheet `name`
/// of a workbook whose first sheet is a cover note.
fn workbook(path: &std::path::Path, name: &str, csv: &str) {
    let bytes = common::workbook_bytes(name, csv, Some("invented test records"));
    std::fs::write(path, bytes).expect("save workbook");
}

fn with_heats(csv: &str) -> String {
    csv.lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                format!("heat,{l}\n")
            } else {
                format!("FH-{},{l}\n", 1000 + i)
            }
        })
        .collect()
}

const SMALL: [&str; 7] = [
    "--hidden",
    "1..3",
    "--restarts",
    "2",
    "--seed",
    "1",
    "--quiet",
];

#[test]
fn a_workbook_trains_and_predicts_as_its_csv_does_and_estimates_go_back_into_one() {
    let w = Workdir::new();
    let train_csv = with_heats(&fixture_csv(120, 41));
    w.write("train.csv", &train_csv);
    workbook(&w.path("train.xlsx"), "heats", &train_csv);
    let query = "heat,x1,x2\nFH-9001,-0.5,1.0\nFH-9002,0.2,0.4\nFH-9003,2.5,1.0\n";
    w.write("q.csv", query);
    workbook(&w.path("q.xlsx"), "new heats", query);
    for (data, out, sheet) in [
        ("train.csv", "a.json", None),
        ("train.xlsx", "b.json", Some("heats")),
    ] {
        let mut args = vec![
            "train", "--data", data, "--target", "y", "--inputs", "x1,x2", "--out", out,
        ];
        args.extend(SMALL);
        if let Some(s) = sheet {
            args.extend(["--sheet", s]);
        }
        w.ok(&args);
    }
    // the same numbers read from either file: the same model, but for the
    // name of the file it was trained on and that file's fingerprint
    let strip = |name: &str| {
        let mut v: Value = serde_json::from_slice(&w.read(name)).expect("model");
        v["training"]["data_file"] = Value::Null;
        v["training"]["data_sha256"] = Value::Null;
        v["tool_version"] = Value::Null;
        v
    };
    assert_eq!(strip("a.json"), strip("b.json"), "models differ");
    // a wrong sheet name: the sheets listed, the nearest suggested
    let args = [
        "predict",
        "--model",
        "a.json",
        "--input",
        "q.xlsx",
        "--sheet",
        "New heats",
    ];
    let out = w.run(&args);
    assert_eq!(out.status.code(), Some(2), "{}", describe(&args, &out));
    let err = stderr(&out);
    assert!(
        err.contains("did you mean 'new heats'") && err.contains("cover, new heats"),
        "{}",
        describe(&args, &out)
    );
    // estimates from the workbook equal those from the CSV, heats echoed
    let csv = stdout(&w.ok(&[
        "predict", "--model", "a.json", "--input", "q.csv", "--format", "csv", "--digits", "17",
    ]));
    let xlsx_csv = stdout(&w.ok(&[
        "predict",
        "--model",
        "a.json",
        "--input",
        "q.xlsx",
        "--sheet",
        "new heats",
        "--format",
        "csv",
        "--digits",
        "17",
    ]));
    assert_eq!(csv, xlsx_csv);
    assert!(csv.starts_with("row,heat,in_domain,domain,"), "{csv}");
    // --out .xlsx: the CSV's cells (numbers as numbers) on sheet
    // 'estimates', each target's distribution on sheet 'targets'
    w.ok(&[
        "predict",
        "--model",
        "a.json",
        "--input",
        "q.xlsx",
        "--sheet",
        "new heats",
        "--out",
        "est.xlsx",
    ]);
    let mut book = open_workbook_auto(w.path("est.xlsx")).expect("workbook");
    assert_eq!(book.sheet_names(), ["estimates", "targets"]);
    let est = book.worksheet_range("estimates").expect("sheet");
    let header: Vec<String> = csv
        .lines()
        .next()
        .expect("header")
        .split(',')
        .map(String::from)
        .collect();
    let got: Vec<String> = est
        .rows()
        .next()
        .expect("row")
        .iter()
        .map(|c| c.to_string())
        .collect();
    assert_eq!(got, header);
    let rows: Vec<&[Data]> = est.rows().skip(1).collect();
    assert_eq!(rows.len(), 3);
    assert_eq!(rows[2][1], Data::String("FH-9003".into()));
    let col = |n: &str| header.iter().position(|h| h == n).expect(n);
    // the default 6 significant digits, as the CSV writes them
    let csv6 = stdout(&w.ok(&[
        "predict", "--model", "a.json", "--input", "q.csv", "--format", "csv",
    ]));
    for (k, line) in csv6.lines().skip(1).enumerate() {
        let cells: Vec<&str> = line.split(',').collect();
        let want: f64 = cells[col("y_mean")].parse().expect("number");
        match rows[k][col("y_mean")] {
            Data::Float(v) => assert_eq!(v, want, "row {}", k + 1),
            ref other => panic!("y_mean stored as {other:?}"),
        }
        let dom = cells[col("domain")];
        assert_eq!(rows[k][col("domain")], Data::String(dom.into()));
    }
    // the caution once, in the first row
    let caution = col("caution");
    assert!(rows[0][caution].to_string().contains("not test results"));
    assert!(rows[1][caution] == Data::Empty && rows[2][caution] == Data::Empty);
    let targets = book.worksheet_range("targets").expect("targets");
    let text: String = targets
        .rows()
        .flatten()
        .map(|c| c.to_string())
        .collect::<Vec<_>>()
        .join(" ");
    assert!(
        text.contains("gross_error_share") && text.contains("not test results"),
        "{text}"
    );
}

/// The bundled invented model and the new welds of its scenario.
fn bundled() -> (String, Vec<String>) {
    let repo = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(repo.join("datasets/fellhaven_new_welds.csv")).expect("csv");
    let model = repo.join("models/fellhaven_welds.json");
    (
        model.to_str().expect("utf-8").to_string(),
        text.lines().map(String::from).collect(),
    )
}

/// `lines` with column `name` renamed `header` and every value mapped by `f`.
fn convert(lines: &[String], name: &str, header: &str, f: impl Fn(f64) -> f64) -> String {
    let col = lines[0]
        .split(',')
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("{name}"));
    let mut out = String::new();
    for (i, l) in lines.iter().enumerate() {
        let mut cells: Vec<String> = l.split(',').map(String::from).collect();
        cells[col] = if i == 0 {
            header.to_string()
        } else {
            let v: f64 = cells[col].parse().expect("number");
            format!("{}", f(v))
        };
        out.push_str(&cells.join(","));
        out.push('\n');
    }
    out
}

/// A table declaring its units in its headers gives the estimates of the
/// same heats in the model's units: a swapped suffix (interpass_temp_f),
/// a unit in brackets (test_temp_c [K]) and a composition in wt% under a
/// ppm name (b_wt).
#[test]
fn declared_units_are_converted_to_the_models() {
    let w = Workdir::new();
    let (model, lines) = bundled();
    w.write("c.csv", lines.join("\n") + "\n");
    let f = convert(&lines, "interpass_temp_c", "interpass_temp_f", |c| {
        1.8 * c + 32.0
    });
    let f: Vec<String> = f.lines().map(String::from).collect();
    let k = convert(&f, "test_temp_c", "test_temp_c [K]", |c| c + 273.15);
    let k: Vec<String> = k.lines().map(String::from).collect();
    w.write(
        "declared.csv",
        convert(&k, "b_ppm", "b_wt", |ppm| ppm / 10_000.0),
    );
    let args = |input: &str| -> Vec<String> {
        [
            "predict", "--model", &model, "--input", input, "--format", "csv", "--digits", "17",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect()
    };
    let a = args("c.csv");
    let want = w.ok(&a.iter().map(String::as_str).collect::<Vec<_>>());
    let b = args("declared.csv");
    let b: Vec<&str> = b.iter().map(String::as_str).collect();
    let got = w.ok(&b);
    same_up_to_rounding(&got.stdout, &want.stdout)
        .unwrap_or_else(|e| panic!("{e}\n{}", describe(&b, &got)));
    let err = stderr(&got);
    for said in [
        "'interpass_temp_f' read as interpass_temp_c, converted from °F to °C",
        "'test_temp_c [K]' read as test_temp_c, converted from K to °C",
        "'b_wt' read as b_ppm, converted from wt% to ppm",
    ] {
        assert!(err.contains(said), "{said}\n{}", describe(&b, &got));
    }
    // a unit of another quantity is refused, naming file and column
    w.write(
        "bad.csv",
        convert(&lines, "interpass_temp_c", "interpass_temp_c [MPa]", |c| c),
    );
    let b = args("bad.csv");
    let b: Vec<&str> = b.iter().map(String::as_str).collect();
    let out = w.run(&b);
    assert_eq!(out.status.code(), Some(2), "{}", describe(&b, &out));
    assert!(
        stderr(&out).contains("bad.csv")
            && stderr(&out).contains("'interpass_temp_c [MPa]' declares MPa"),
        "{}",
        describe(&b, &out)
    );
}

/// Interpass temperatures written in °F under the model's °C name, without
/// a declaration: refused with what to do (the archive gave exit 0 and an
/// sd of 1.8e7). Declared, they are estimated and the notes show the
/// values in the declared unit.
#[test]
fn an_undeclared_fahrenheit_column_is_refused_and_a_declared_one_is_shown_in_its_unit() {
    let w = Workdir::new();
    let (model, lines) = bundled();
    w.write(
        "f.csv",
        convert(&lines, "interpass_temp_c", "interpass_temp_c", |c| {
            1.8 * c + 32.0
        }),
    );
    let args = [
        "predict", "--model", &model, "--input", "f.csv", "--format", "json",
    ];
    let out = w.run(&args);
    assert_eq!(out.status.code(), Some(2), "{}", describe(&args, &out));
    let err = stderr(&out);
    for said in [
        "f.csv",
        "column interpass_temp_c",
        "3 of 8 values (320, 365, 374)",
        "every value lies inside it read as °F",
        "interpass_temp_c [degF]",
    ] {
        assert!(err.contains(said), "{said}\n{}", describe(&args, &out));
    }
    // the same refusal from screen
    let sargs = [
        "screen",
        "--model",
        &model,
        "--input",
        "f.csv",
        "--require",
        "uts_mpa>=500",
    ];
    let out = w.run(&sargs);
    assert_eq!(out.status.code(), Some(2), "{}", describe(&sargs, &out));
    assert!(
        stderr(&out).contains("inside it read as °F"),
        "{}",
        describe(&sargs, &out)
    );
    // declared: estimated; a heat at 500 °C interpass (932 °F), beyond the
    // training range 20 to 245 °C, has its note in °F: 245 °C = 473 °F
    let mut f: Vec<String> = convert(&lines, "interpass_temp_c", "interpass_temp_c [degF]", |c| {
        1.8 * c + 32.0
    })
    .lines()
    .map(String::from)
    .collect();
    let col = f[0]
        .split(',')
        .position(|h| h.starts_with("interpass"))
        .expect("col");
    let mut cells: Vec<String> = f[1].split(',').map(String::from).collect();
    cells[col] = "932".into();
    f[1] = cells.join(",");
    w.write("fd.csv", f.join("\n") + "\n");
    let args = [
        "predict", "--model", &model, "--input", "fd.csv", "--format", "json",
    ];
    let out = w.ok(&args);
    let v: Value = serde_json::from_slice(&out.stdout).expect("JSON");
    let notes = v["rows"][0]["notes"].to_string();
    assert!(
        notes.contains("interpass_temp_c = 932 °F is above the training range 68 to 473 °F"),
        "{}",
        describe(&args, &out)
    );
    assert_eq!(v["rows"][0]["domain"], "outside");
    assert_eq!(v["rows"][0]["in_domain"], false);
}
