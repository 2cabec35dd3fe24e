//! Units at prediction time, schema drafting and messages, through the
//! real binary (the archive-workflow issue): a note when a column looks
//! like another unit than the model's, hardness units, the quick path's
//! guard against training on results, `train --schema S --target T`,
//! `mettle schema`, and a TOML error that keeps its layout. The tables are
//! the invented fixture of tests/common and the bundled invented data.

mod common;

use common::{describe, fixture_csv, stderr, stdout, Workdir};
use serde_json::Value;

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
fn the_quick_path_names_its_inputs_and_warns_of_results_among_them() {
    let w = Workdir::new();
    // a hardness column: a result of testing the same steel
    let csv = common::with_rows(&fixture_csv(80, 42), "x1,x2,hardness_hv,y", |v| {
        format!("{},{},{},{}", v[0], v[1], 200.0 + 10.0 * v[2], v[2])
    });
    w.write("d.csv", csv);
    let mut args = vec![
        "train", "--data", "d.csv", "--target", "y", "--out", "m.json",
    ];
    args.extend(SMALL);
    let out = w.ok(&args);
    let err = stderr(&out);
    assert!(
        err.contains("inputs: every column holding numbers but the target(s): x1, x2, hardness_hv"),
        "{err}"
    );
    assert!(
        err.contains("warning: input 'hardness_hv' looks like a measured property (hardness)"),
        "{err}"
    );
    // named inputs: no guard
    args.extend(["--inputs", "x1,x2"]);
    let err = stderr(&w.ok(&args));
    assert!(!err.contains("measured property"), "{err}");
}

/// A one-target model from a two-target schema with --target; a hardness
/// target in HV keeps its unit (no conversion to another scale).
#[test]
fn train_picks_targets_from_a_schema_and_hardness_keeps_its_scale() {
    let w = Workdir::new();
    let csv = common::with_rows(&fixture_csv(80, 43), "x1,x2,y,hv", |v| {
        format!("{},{},{},{}", v[0], v[1], v[2], 250.0 + 20.0 * v[2])
    });
    w.write("d.csv", csv);
    w.write(
        "s.toml",
        "mettle_schema = 1\n\n[[column]]\nname = \"x1\"\nrole = \"input\"\nunit = \"1\"\n\n\
[[column]]\nname = \"x2\"\nrole = \"input\"\nunit = \"1\"\n\n\
[[column]]\nname = \"y\"\nrole = \"target\"\nunit = \"MPa\"\n\n\
[[column]]\nname = \"hv\"\nrole = \"target\"\nunit = \"HV10\"\nmin = 0\nmax = 1000\n",
    );
    let mut args = vec![
        "train", "--data", "d.csv", "--schema", "s.toml", "--target", "hv", "--out", "m.json",
    ];
    args.extend(SMALL);
    w.ok(&args);
    let model: Value = serde_json::from_slice(&w.read("m.json")).expect("model");
    let targets: Vec<&str> = model["targets"]
        .as_array()
        .expect("targets")
        .iter()
        .map(|t| t["name"].as_str().expect("name"))
        .collect();
    assert_eq!(targets, ["hv"]);
    w.write("q.csv", "x1,x2\n0.1,1.0\n");
    let out = w.ok(&[
        "predict", "--model", "m.json", "--input", "q.csv", "--format", "json", "--units",
        "declared",
    ]);
    let v: Value = serde_json::from_slice(&out.stdout).expect("JSON");
    assert_eq!(v["targets"]["hv"]["unit"], "HV", "{v}");
    // a target the schema does not declare
    let mut bad = args.clone();
    bad[6] = "HV";
    let out = w.run(&bad);
    assert_eq!(out.status.code(), Some(2), "{}", describe(&bad, &out));
    assert!(
        stderr(&out).contains("did you mean 'hv'"),
        "{}",
        describe(&bad, &out)
    );
}

/// The bundled invented model learnt test temperatures in °C (−80 to
/// 20 °C); a heat whose test temperature is written in °F (0 °C written
/// 32), beside one written in °C, gets a note naming the unit:
/// °C = (°F − 32)/1.8 (NIST SP 811).
#[test]
fn fahrenheit_like_values_in_a_celsius_column_get_a_note() {
    let w = Workdir::new();
    let repo = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(repo.join("datasets/fellhaven_new_welds.csv")).expect("csv");
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    let col = lines[0]
        .split(',')
        .position(|h| h == "test_temp_c")
        .expect("test_temp_c");
    let mut cells: Vec<String> = lines[1].split(',').map(String::from).collect();
    cells[col] = "32".into();
    lines[1] = cells.join(",");
    // two heats, one of them written in °F: a note on that row (a column
    // whose every value looks so is refused: spreadsheets_units_messages.rs)
    w.write("new.csv", lines[..3].join("\n") + "\n");
    let model = repo.join("models/fellhaven_welds.json");
    let args = [
        "predict",
        "--model",
        model.to_str().expect("utf-8"),
        "--input",
        "new.csv",
        "--format",
        "json",
    ];
    let out = w.ok(&args);
    let v: Value = serde_json::from_slice(&out.stdout).expect("JSON");
    let notes = v["rows"][0]["notes"].to_string();
    assert!(
        notes.contains("test_temp_c = 32 °C") && notes.contains("read as °F it would lie inside"),
        "{}",
        describe(&args, &out)
    );
}

/// `mettle schema` drafts a schema for the bundled invented archive: a
/// comment above every column, the four measured properties proposed as
/// targets, units read from the names (b_ppm in ppm, test_temp_c in °C,
/// heat input in kJ/mm), element symbols for derivations — and the draft
/// is a valid schema that audit and train accept as it is.
#[test]
fn a_drafted_schema_comments_every_guess_and_is_accepted() {
    let w = Workdir::new();
    let repo = std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let data = repo.join("datasets/fellhaven_welds_export.csv");
    let data = data.to_str().expect("utf-8");
    w.ok(&["schema", "--data", data, "--out", "s.toml"]);
    let text = String::from_utf8(w.read("s.toml")).expect("UTF-8");
    let lines: Vec<&str> = text.lines().collect();
    for (i, l) in lines.iter().enumerate() {
        if *l == "[[column]]" {
            assert!(
                lines[i - 1].starts_with("# "),
                "no comment above line {}:\n{text}",
                i + 1
            );
        }
    }
    let v: toml::Value = toml::from_str(&text).expect("TOML");
    let cols = v["column"].as_array().expect("columns");
    let col = |n: &str| {
        cols.iter()
            .find(|c| c["name"].as_str() == Some(n))
            .unwrap_or_else(|| panic!("{n}"))
    };
    let targets: Vec<&str> = cols
        .iter()
        .filter(|c| c["role"].as_str() == Some("target"))
        .map(|c| c["name"].as_str().expect("name"))
        .collect();
    assert_eq!(
        targets,
        ["yield_mpa", "uts_mpa", "elongation_pct", "charpy_j"]
    );
    assert_eq!(col("b_ppm")["unit"].as_str(), Some("ppm"));
    assert_eq!(col("b_ppm")["stands_for"].as_str(), Some("B"));
    assert_eq!(col("mn_wt")["stands_for"].as_str(), Some("Mn"));
    assert_eq!(col("test_temp_c")["unit"].as_str(), Some("°C"));
    assert_eq!(col("heat_input_kj_mm")["unit"].as_str(), Some("kJ/mm"));
    assert_eq!(col("elongation_pct")["unit"].as_str(), Some("%"));
    assert_eq!(col("charpy_j")["transform"].as_str(), Some("log"));
    w.ok(&["audit", "--data", data, "--schema", "s.toml"]);
    let mut args = vec![
        "train", "--data", data, "--schema", "s.toml", "--target", "uts_mpa", "--out", "m.json",
    ];
    args.extend([
        "--hidden",
        "1..2",
        "--restarts",
        "1",
        "--quiet",
        "--kriging",
        "off",
    ]);
    w.ok(&args);
    // a hardness column: a target in HV; a heat code: the identifier
    w.write(
        "h.csv",
        "heat,c_wt,hardness_hv\nFH-1,0.1,210\nFH-2,0.2,260\n",
    );
    let text = stdout(&w.ok(&["schema", "--data", "h.csv"]));
    let v: toml::Value = toml::from_str(&text).expect("TOML");
    let cols = v["column"].as_array().expect("columns");
    assert_eq!(cols[0]["role"].as_str(), Some("identifier"), "{text}");
    assert_eq!(cols[2]["role"].as_str(), Some("target"), "{text}");
    assert_eq!(cols[2]["unit"].as_str(), Some("HV"), "{text}");
}

/// A TOML error keeps the parser's layout: the excerpt and its caret on
/// lines of their own.
#[test]
fn a_schema_toml_error_keeps_its_lines() {
    let w = Workdir::new();
    w.write("d.csv", fixture_csv(20, 44));
    w.write(
        "s.toml",
        "mettle_schema = 1\n[[column]]\nname = \"x1\nrole = \"input\"\n",
    );
    let args = [
        "train", "--data", "d.csv", "--schema", "s.toml", "--out", "m.json",
    ];
    let out = w.run(&args);
    assert_eq!(out.status.code(), Some(2), "{}", describe(&args, &out));
    let err = stderr(&out);
    assert!(err.lines().count() >= 3, "{}", describe(&args, &out));
    // the excerpt's line on a line of its own, not joined to the message
    assert!(
        err.lines().any(|l| l.trim_start().starts_with("3 | name")),
        "{}",
        describe(&args, &out)
    );
    assert!(
        err.lines()
            .any(|l| l.trim_start().starts_with('^') || l.contains('^')),
        "{}",
        describe(&args, &out)
    );
}
