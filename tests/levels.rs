//! Inputs declared as codes (schema `kind = "levels"`, issue 29's fourth
//! round): training on one indicator column per level, the model file's
//! record, prediction's refusal of an unseen level, the domain guard,
//! explain, sweep and design, through the library and the real binary.
//! Every table here is invented (not measured data).

use mettle::committee::CommitteeParams;
use mettle::data::schema::Schema;
use mettle::data::Table;
use mettle::model::{Model, SchemaTrainOptions};
use mettle::observer::Silent as NoObserver;

/// An invented table (not measured data): y = x + a level effect that
/// is not monotone in the code (none 0, argon +1, carbon dioxide −0.5),
/// with a small deterministic wobble.
fn invented(gas: &[&str]) -> Table {
    let n = gas.len();
    let effect = |g: &str| match g {
        "0" | "none" => 0.0,
        "1" | "argon" => 1.0,
        "2" | "carbon_dioxide" => -0.5,
        _ => 0.0,
    };
    let x: Vec<f64> = (0..n).map(|i| (i % 7) as f64 / 6.0).collect();
    let y: Vec<f64> = (0..n)
        .map(|i| x[i] + effect(gas[i]) + 0.02 * ((i * 37 % 11) as f64 - 5.0) / 5.0)
        .collect();
    let mut t =
        Table::from_columns("invented.csv", vec![("x".into(), x), ("y".into(), y)]).expect("table");
    t.push_column(
        "gas".into(),
        mettle::data::ColumnData::Text(gas.iter().map(|g| Some(g.to_string())).collect()),
    )
    .expect("gas");
    t
}

const CODED: &str = r#"
mettle_schema = 1
[[column]]
name = "x"
role = "input"
unit = "1"
[[column]]
name = "gas"
role = "input"
kind = "levels"
levels = { 0 = "none", 1 = "argon", 2 = "carbon_dioxide", 3 = "helium" }
[[column]]
name = "y"
role = "target"
unit = "1"
"#;

fn quick() -> SchemaTrainOptions {
    SchemaTrainOptions {
        params: CommitteeParams {
            hidden_min: 1,
            hidden_max: 3,
            restarts: 1,
            max_members: 3,
            ..CommitteeParams::default()
        },
        ..SchemaTrainOptions::default()
    }
}

#[test]
fn a_declared_code_trains_on_indicators_and_is_recorded() {
    let gas: Vec<&str> = (0..63).map(|i| ["0", "1", "2"][i % 3]).collect();
    let schema = Schema::from_toml(CODED, "s.toml").expect("schema");
    let (model, _) =
        Model::train_with_schema(&invented(&gas), &schema, "s.toml", &quick(), &NoObserver)
            .expect("train");
    assert_eq!(
        model.input_names(),
        vec!["x", "gas=none", "gas=argon", "gas=carbon_dioxide"]
    );
    let helium = model.set_aside.iter().find(|s| s.name == "gas=helium");
    assert!(
        helium.is_some_and(|s| s.reason.contains("no training row holds it")),
        "{helium:?}"
    );
    let rows: Vec<(i64, usize)> = model.codes[0]
        .levels
        .iter()
        .map(|l| (l.code, l.training_rows))
        .collect();
    assert_eq!(rows, vec![(0, 21), (1, 21), (2, 21), (3, 0)]);
    // the guard checks the code level by level: its indicators (inputs 1-3)
    // leave the relevance-weighted distance and get a within-level reference
    let guard = model.domain.as_ref().expect("reference");
    assert_eq!(guard.codes.len(), 1);
    assert_eq!(guard.codes[0].columns, vec![1, 2, 3]);
    assert!(guard.codes[0].far.is_finite() && guard.codes[0].far > 0.0);
    assert_eq!(&guard.weights()[1..], &[0.0; 3]);
    assert_eq!(
        model.codes[0].seen_text(),
        "0 = none, 1 = argon, 2 = carbon_dioxide"
    );
    // the record survives the file format
    let back: Model =
        serde_json::from_str(&serde_json::to_string(&model).expect("json")).expect("back");
    assert_eq!(back.codes, model.codes);
    // estimates follow the non-monotone level effect at x = 0.5
    let q = invented(&["none", "argon", "carbon_dioxide"]);
    let q = Table::from_columns(
        "q.csv",
        vec![("x".into(), vec![0.5; 3]), ("y".into(), vec![0.0; 3])],
    )
    .and_then(|mut t| {
        t.push_column(
            "gas".into(),
            q.column_at(q.index_of("gas").expect("gas"))
                .expect("col")
                .clone(),
        )?;
        Ok(t)
    })
    .expect("query");
    let p = model.predict(&q).expect("predict");
    let m: Vec<f64> = p.iter().map(|r| r.estimates[0].mean).collect();
    for (got, want) in m.iter().zip([0.5, 1.5, 0.0]) {
        assert!((got - want).abs() < 0.15, "{m:?}");
    }
    // the guard's range check of a code: a row must spell a seen level
    let spelt = model.domain_check(ndarray::array![0.5, 0.0, 1.0, 0.0].view());
    assert!(
        !spelt.notes.iter().any(|n| n.contains("is a code")),
        "{spelt:?}"
    );
    for bad in [
        [0.5, 0.5, 0.5, 0.0],
        [0.5, 1.0, 1.0, 0.0],
        [0.5, 0.0, 0.0, 0.0],
    ] {
        let v = model.domain_check(ndarray::ArrayView1::from(&bad));
        assert!(
            !v.in_domain && v.notes.iter().any(|n| n.contains("'gas' is a code")),
            "{bad:?}: {v:?}"
        );
    }
    // explain: one relevance figure per column, a code's summed
    let card = mettle::explain::model_card(&model);
    let t = &card.targets[0];
    let (per_input, by_col) = (
        t.relevance.as_ref().expect("ard"),
        t.relevance_by_column.as_ref().expect("codes"),
    );
    let names: Vec<&str> = by_col.0.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(names, vec!["x", "gas"]);
    let summed: f64 = per_input.0[1..].iter().map(|(_, v)| v).sum();
    assert!((by_col.0[1].1 - summed).abs() < 1e-12 && summed > 0.0);
    // a code is never moved continuously: sweep and design refuse it
    for name in ["gas", "gas=argon"] {
        let e = model
            .refuse_moving_code(name, "vary")
            .expect_err(name)
            .to_string();
        assert!(
            e.contains("'gas' is a code") && e.contains("1 = argon"),
            "{e}"
        );
    }
    assert!(model.refuse_moving_code("x", "vary").is_ok());
    let axis = mettle::curves::Axis::parse("gas=0:2", 3).expect("axis");
    let e = mettle::curves::sweep(&model, (vec![("x".into(), 0.5)], vec![]), &[axis])
        .expect_err("sweep over a code")
        .to_string();
    assert!(e.contains("is a code"), "{e}");
    // a declared level no training row held is refused with the known levels
    let e = model
        .predict(&invented(&["0", "helium"]))
        .expect_err("unseen level")
        .to_string();
    assert!(
        e.contains("row 2")
            && e.contains("'gas'")
            && e.contains("3 = helium")
            && e.contains("0 = none, 1 = argon, 2 = carbon_dioxide"),
        "{e}"
    );
}

const BIN: &str = env!("CARGO_BIN_EXE_mettle");

/// Run the binary in `dir`; (success, stdout, stderr).
fn run(dir: &std::path::Path, args: &[&str]) -> (bool, String, String) {
    let out = std::process::Command::new(BIN)
        .args(args)
        .current_dir(dir)
        .env("OPENBLAS_NUM_THREADS", "1")
        .output()
        .expect("run mettle");
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn the_binary_trains_predicts_and_refuses_by_level() {
    let dir = std::env::temp_dir().join(format!("mettle-levels-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("dir");
    // the invented table as a CSV, cells by name on even rows and by code on odd
    let gas: Vec<String> = (0..63)
        .map(|i| {
            let names = ["none", "argon", "carbon_dioxide"];
            if i % 2 == 0 {
                names[i % 3].to_string()
            } else {
                (i % 3).to_string()
            }
        })
        .collect();
    let refs: Vec<&str> = gas.iter().map(String::as_str).collect();
    let t = invented(&refs);
    std::fs::write(dir.join("invented.csv"), t.to_csv_bytes()).expect("csv");
    std::fs::write(dir.join("s.toml"), CODED).expect("schema");
    let (ok, _, err) = run(
        &dir,
        &[
            "train",
            "--data",
            "invented.csv",
            "--schema",
            "s.toml",
            "--out",
            "m.json",
            "--hidden",
            "1..3",
        ],
    );
    assert!(ok, "{err}");
    assert!(
        err.contains("if it is a code")
            || !err.contains("gas=helium")
            || err.contains("no training row holds it"),
        "{err}"
    );
    let m: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.join("m.json")).expect("model")).expect("json");
    assert_eq!(m["codes"][0]["name"], "gas");
    assert_eq!(m["codes"][0]["levels"][3]["training_rows"], 0);
    // predict by name and by code: the level effects come back
    std::fs::write(
        dir.join("q.csv"),
        "x,gas\n0.5,none\n0.5,1\n0.5,carbon_dioxide\n",
    )
    .expect("q");
    let (ok, out, err) = run(
        &dir,
        &[
            "predict", "--model", "m.json", "--input", "q.csv", "--format", "csv",
        ],
    );
    assert!(ok, "{err}");
    let header: Vec<&str> = out.lines().next().unwrap_or("").split(',').collect();
    let col = header
        .iter()
        .position(|h| h.ends_with("mean"))
        .expect("a mean column");
    let means: Vec<f64> = out
        .lines()
        .skip(1)
        .filter_map(|l| l.split(',').nth(col)?.parse().ok())
        .collect();
    assert_eq!(means.len(), 3, "{out}");
    for (got, want) in means.iter().zip([0.5, 1.5, 0.0]) {
        assert!((got - want).abs() < 0.15, "{out}");
    }
    // an unseen level and an undeclared one are refused with file, row, column, levels
    std::fs::write(dir.join("bad.csv"), "x,gas\n0.5,none\n0.5,helium\n").expect("bad");
    let (ok, _, err) = run(
        &dir,
        &["predict", "--model", "m.json", "--input", "bad.csv"],
    );
    assert!(!ok);
    assert!(
        err.contains("bad.csv: row 2, column 'gas'")
            && err.contains("0 = none, 1 = argon, 2 = carbon_dioxide"),
        "{err}"
    );
    std::fs::write(dir.join("bad7.csv"), "x,gas\n0.5,7\n").expect("bad7");
    let (ok, _, err) = run(
        &dir,
        &["predict", "--model", "m.json", "--input", "bad7.csv"],
    );
    assert!(
        !ok && err.contains("bad7.csv: row 1") && err.contains("'gas'"),
        "{err}"
    );
    // explain shows one relevance for the code; sweep and design refuse to move it
    let (ok, out, err) = run(&dir, &["explain", "--model", "m.json"]);
    assert!(ok && out.contains("relevance per column"), "{out}{err}");
    let (ok, _, err) = run(
        &dir,
        &[
            "sweep", "--model", "m.json", "--vary", "gas=0:2", "--set", "x=0.5",
        ],
    );
    assert!(!ok && err.contains("'gas' is a code"), "{err}");
    let (ok, _, err) = run(
        &dir,
        &[
            "design",
            "--model",
            "m.json",
            "--require",
            "y>=1",
            "--vary",
            "gas=0:2",
            "--vary",
            "x=0:1",
        ],
    );
    assert!(!ok && err.contains("'gas' is a code"), "{err}");
    // the report's effect curves hold the code at a level instead of failing
    let (ok, _, err) = run(
        &dir,
        &[
            "report",
            "--model",
            "m.json",
            "--data",
            "invented.csv",
            "--out",
            "r.html",
        ],
    );
    assert!(ok, "{err}");
    let html = std::fs::read_to_string(dir.join("r.html")).expect("report");
    assert!(
        html.contains("gas is a code") && !html.contains("along gas="),
        "report"
    );
    // audit and the quick training path hint at an undeclared whole-number input
    let mut rows = String::from("k,x,y\n");
    for i in 0..40 {
        rows += &format!(
            "{},{},{}\n",
            i % 5,
            (i % 7) as f64 / 6.0,
            (i % 5) as f64 + 0.1 * (i % 7) as f64
        );
    }
    std::fs::write(dir.join("k.csv"), rows).expect("k");
    let (ok, out, err) = run(&dir, &["audit", "--data", "k.csv", "--target", "y"]);
    assert!(
        ok && out.contains("input 'k' holds only the whole numbers 0, 1, 2, 3, 4"),
        "{out}{err}"
    );
    assert!(!out.contains("input 'x' holds only"), "{out}");
    let (ok, _, err) = run(
        &dir,
        &[
            "train", "--data", "k.csv", "--target", "y", "--out", "k.json", "--hidden", "1..2",
        ],
    );
    assert!(ok && err.contains("declare it a code"), "{err}");
    std::fs::remove_dir_all(&dir).ok();
}

/// The expansion equals pandas' get_dummies and scikit-learn's
/// OneHotEncoder (agreeing with each other) on the glazing area
/// distribution code of the UCI energy-efficiency data (Tsanas & Xifara
/// 2012), 768 rows; level 6 is declared and held by no row. Made once by
/// tests/reference/indicator_expansion.py.
#[test]
fn expansion_equals_pandas_and_scikit_learn_one_hot() {
    let r: serde_json::Value =
        serde_json::from_str(include_str!("data/indicator_expansion.json")).expect("json");
    let codes: Vec<i64> = r["codes"]
        .as_array()
        .expect("codes")
        .iter()
        .map(|v| v.as_i64().expect("int"))
        .collect();
    let n = codes.len();
    assert_eq!(n, 768);
    let schema = Schema::from_toml(
        r#"
mettle_schema = 1
[[column]]
name = "gad"
role = "input"
kind = "levels"
levels = { 0 = "none", 1 = "uniform", 2 = "north", 3 = "east", 4 = "south", 5 = "west", 6 = "skylight" }
[[column]]
name = "y"
role = "target"
unit = "1"
"#,
        "s.toml",
    )
    .expect("schema");
    let mut t = Table::from_columns("energy.csv", vec![("y".into(), vec![0.0; n])]).expect("t");
    t.push_column(
        "gad".into(),
        mettle::data::ColumnData::Text(codes.iter().map(|c| Some(c.to_string())).collect()),
    )
    .expect("gad");
    let p = schema
        .prepare(&t, "s.toml", Default::default())
        .expect("prepare");
    let names = [
        "none", "uniform", "north", "east", "south", "west", "skylight",
    ];
    assert_eq!(
        p.inputs,
        names.iter().map(|l| format!("gad={l}")).collect::<Vec<_>>()
    );
    let want = r["indicators"].as_array().expect("matrix");
    for (k, name) in p.inputs.iter().enumerate() {
        let got = p.table.numeric(name).expect("column");
        for (i, row) in want.iter().enumerate() {
            assert_eq!(got[i], row[k].as_f64().expect("0/1"), "row {i}, {name}");
        }
    }
}

/// `implied_level`: the level told by other inputs gets no indicator; its
/// rows (every indicator 0) are counted, predicted and inside the domain.
#[test]
fn an_implied_level_has_no_column_and_is_still_known() {
    let gas: Vec<&str> = (0..63).map(|i| ["0", "1", "2"][i % 3]).collect();
    let text = CODED.replace("levels = { 0", "implied_level = \"none\"\nlevels = { 0");
    let schema = Schema::from_toml(&text, "s.toml").expect("schema");
    let (model, _) =
        Model::train_with_schema(&invented(&gas), &schema, "s.toml", &quick(), &NoObserver)
            .expect("train");
    assert_eq!(
        model.input_names(),
        vec!["x", "gas=argon", "gas=carbon_dioxide"]
    );
    let rows: Vec<usize> = model.codes[0]
        .levels
        .iter()
        .map(|l| l.training_rows)
        .collect();
    assert_eq!(rows, vec![21, 21, 21, 0]);
    let guard = model.domain.as_ref().expect("reference");
    assert_eq!(guard.codes[0].columns, vec![1, 2]);
    let v = model.domain_check(ndarray::array![0.5, 0.0, 0.0].view());
    assert!(!v.notes.iter().any(|n| n.contains("is a code")), "{v:?}");
    let p = model
        .predict(&invented(&["none", "argon"]))
        .expect("predict");
    assert!(p[1].estimates[0].mean - p[0].estimates[0].mean > 0.7);
    let bad = CODED.replace("levels = { 0", "implied_level = \"neon\"\nlevels = { 0");
    let e = Schema::from_toml(&bad, "s.toml")
        .expect_err("neon")
        .to_string();
    assert!(e.contains("not one of the declared level names"), "{e}");
}
