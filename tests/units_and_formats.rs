//! Units of the trade and file formats, through the real binary: values are
//! converted with the NIST SP 811 factors before anything else sees them,
//! so a table written in ppm, °F, J/mm, inches and ksi trains the same
//! model as the same records in wt%, °C, kJ/mm, mm and MPa; and a CSV and
//! the same data as Parquet give byte-identical model files.
//!
//! All tables are invented (tests/common/mod.rs).

mod common;

use common::{
    describe, weld_csv, weld_parquet, weld_schema, welds, Workdir, INTERNAL_UNITS,
    MPA_PER_KSI_EXACT, US_SHEET_UNITS,
};
use serde_json::Value;

/// Train through `schema` on `data` into `out` with small, fixed settings
/// (no wall-clock time recorded: that is the default).
fn train(w: &Workdir, data: &str, schema: &str, out: &str) {
    w.ok(&[
        "train",
        "--data",
        data,
        "--schema",
        schema,
        "--out",
        out,
        "--hidden",
        "1..3",
        "--restarts",
        "2",
        "--seed",
        "3",
        "--quiet",
    ]);
}

/// Estimates of `model` for `input`, as JSON rows.
fn predict(w: &Workdir, model: &str, input: &str, units: &str) -> Vec<Value> {
    let args = [
        "predict", "--model", model, "--input", input, "--format", "json", "--units", units,
    ];
    let out = w.ok(&args);
    // read, converted, derived and estimated a few rows at a time, the
    // same rows and estimates (to rounding) come out as from the whole table
    let mut small = args.to_vec();
    small.extend(["--batch-rows", "3"]);
    let batched = w.ok(&small);
    if let Err(e) = common::same_up_to_rounding(&out.stdout, &batched.stdout) {
        panic!(
            "batches of 3 rows changed the estimates: {e}\n{}",
            describe(&small, &batched)
        );
    }
    common::predict_rows(&out.stdout)
}

fn field(row: &Value, key: &str) -> f64 {
    row[key]
        .as_f64()
        .unwrap_or_else(|| panic!("no number {key} in {row}"))
}

const ESTIMATE_KEYS: [&str; 5] = ["mean", "median", "sd", "lo95", "hi95"];

#[test]
fn nist_check_values_come_out_of_a_mixed_unit_table() {
    // NIST SP 811 check values, via the trade-formulas reference [S]:
    // 50 ppm = 0.0050 wt%; −4 °F = −20 °C; 20 ft·lbf = 27.1164 J;
    // 50 ksi = 344.738 MPa; plus 1 in = 25.4 mm and 1 J/mm = 0.001 kJ/mm
    // (exact by definition, NIST SP 811)
    let w = Workdir::new();
    w.write(
        "sheet.csv",
        "heat,n_ppm,test_temp,plate,q,ys,kv\nA,50,-4,1,1500,50,20\nB,100,32,2,800,60,30\n",
    );
    w.write(
        "sheet.toml",
        r#"mettle_schema = 1
[[column]]
name = "heat"
role = "identifier"
[[column]]
name = "n_ppm"
role = "input"
unit = "ppm"
[[column]]
name = "test_temp"
role = "input"
unit = "degF"
[[column]]
name = "plate"
role = "input"
unit = "in"
[[column]]
name = "q"
role = "input"
unit = "J/mm"
[[column]]
name = "ys"
role = "input"
unit = "ksi"
[[column]]
name = "kv"
role = "target"
unit = "ft*lbf"
"#,
    );
    let args = [
        "audit",
        "--data",
        "sheet.csv",
        "--schema",
        "sheet.toml",
        "--format",
        "json",
    ];
    let out = w.ok(&args);
    let report: Value = serde_json::from_slice(&out.stdout).expect("audit JSON");
    let column = |name: &str| -> &Value {
        report["columns"]
            .as_array()
            .and_then(|c| c.iter().find(|c| c["name"] == name))
            .unwrap_or_else(|| panic!("no column {name}\n{}", describe(&args, &out)))
    };
    for (name, unit, declared, min, tolerance) in [
        ("n_ppm", "wt%", "ppm", 0.0050, 5e-5),
        ("test_temp", "°C", "°F", -20.0, 1e-9),
        ("plate", "mm", "in", 25.4, 1e-9),
        ("q", "kJ/mm", "J/mm", 0.8, 1e-12),
        ("ys", "MPa", "ksi", 344.738, 5e-4),
        ("kv", "J", "ft·lbf", 27.1164, 5e-5),
    ] {
        let c = column(name);
        assert_eq!(c["unit"], unit, "{c}");
        assert_eq!(c["declared_unit"], declared, "{c}");
        let got = c["min"].as_f64().expect("min");
        assert!(
            (got - min).abs() <= tolerance,
            "{name}: {got} {unit}, want {min} (NIST SP 811)"
        );
    }
}

#[test]
fn derived_inputs_see_converted_values() {
    // preheat 68 °F = 20 °C, heat input 1000 J/mm = 1.0 kJ/mm: EN 1011-2
    // Annex D via the trade-formulas reference [S] gives t8/5 = 11.3636 s
    // (2-D) at d = 10 mm and 5.2885 s (3-D) above d_t = 14.6586 mm, here at
    // 1 in = 25.4 mm; Ex2 of the reference gives Pcm = 0.269167 (Ito &
    // Bessyo [S]) with B = 0.0005 wt%, written as 5 ppm
    let w = Workdir::new();
    w.write(
        "j.csv",
        format!(
            "c,si,mn,cr,mo,v,ni,cu,b,pre,q,d\n\
             0.16,0.30,1.40,0.10,0.05,0.05,0.20,0.20,5,68,1000,{}\n\
             0.16,0.30,1.40,0.10,0.05,0.05,0.20,0.20,5,68,1000,1\n",
            10.0 / 25.4
        ),
    );
    let mut schema = String::from("mettle_schema = 1\n");
    for (name, unit, stands_for) in [
        ("c", "wt%", "C"),
        ("si", "wt%", "Si"),
        ("mn", "wt%", "Mn"),
        ("cr", "wt%", "Cr"),
        ("mo", "wt%", "Mo"),
        ("v", "wt%", "V"),
        ("ni", "wt%", "Ni"),
        ("cu", "wt%", "Cu"),
        ("b", "ppm", "B"),
        ("pre", "degF", "preheat"),
        ("q", "J/mm", "heat_input"),
        ("d", "in", "thickness"),
    ] {
        schema.push_str(&format!(
            "[[column]]\nname = \"{name}\"\nrole = \"auxiliary\"\nunit = \"{unit}\"\nstands_for = \"{stands_for}\"\n"
        ));
    }
    schema.push_str("[[derived]]\nspec = \"pcm\"\n[[derived]]\nspec = \"t85\"\n");
    w.write("j.toml", schema);
    w.ok(&[
        "derive", "--data", "j.csv", "--schema", "j.toml", "--out", "out.csv",
    ]);
    let text = String::from_utf8(w.read("out.csv")).expect("UTF-8");
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    let at = |name: &str| header.iter().position(|h| *h == name).expect("column");
    let rows: Vec<Vec<f64>> = lines
        .map(|l| l.split(',').map(|c| c.parse().expect("number")).collect())
        .collect();
    for r in &rows {
        let pcm = r[at("Pcm")];
        assert!((pcm - 0.269167).abs() < 5e-7, "Pcm {pcm}");
    }
    let (t2d, t3d) = (rows[0][at("t85")], rows[1][at("t85")]);
    assert!((t2d - 11.3636).abs() < 5e-5, "2-D t8/5 {t2d}");
    assert!((t3d - 5.2885).abs() < 5e-5, "3-D t8/5 {t3d}");
    // the table's own cells are written as read
    assert_eq!(rows[0][at("pre")], 68.0);
    assert_eq!(rows[0][at("b")], 5.0);
}

/// Train on `si` (records, fresh rows) written in internal units and on `us`
/// written in US units, each through its schema, and estimate the fresh
/// rows; the estimates (in MPa) of the internal-unit model, then of the
/// US-unit one.
fn estimates_in_both_unit_systems(
    w: &Workdir,
    si: (&[common::Weld], &[common::Weld]),
    us: (&[common::Weld], &[common::Weld]),
) -> (Vec<Value>, Vec<Value>) {
    for (tag, units, (records, fresh)) in [("si", &INTERNAL_UNITS, si), ("us", &US_SHEET_UNITS, us)]
    {
        w.write(&format!("{tag}.toml"), weld_schema(units));
        w.write(&format!("{tag}.csv"), weld_csv(records, units));
        w.write(&format!("{tag}_new.csv"), weld_csv(fresh, units));
        train(
            w,
            &format!("{tag}.csv"),
            &format!("{tag}.toml"),
            &format!("{tag}.json"),
        );
    }
    let a = predict(w, "si.json", "si_new.csv", "internal");
    let b = predict(w, "us.json", "us_new.csv", "internal");
    assert_eq!(a.len(), si.1.len());
    assert_eq!(b.len(), us.1.len());
    for (x, y) in a.iter().zip(&b) {
        assert_eq!(x["unit"], "MPa", "{x}");
        assert_eq!(y["unit"], "MPa", "{y}");
    }
    (a, b)
}

/// The two models' estimates put every row on the same side of the
/// domain guard.
fn same_domain_calls(a: &[Value], b: &[Value]) {
    for (x, y) in a.iter().zip(b) {
        assert_eq!(x["in_domain"], y["in_domain"], "{x}\n{y}");
    }
}

#[test]
fn a_us_unit_table_trains_the_same_model_as_its_nist_conversion() {
    // the US sheet is the record; the internal-unit table is what the NIST
    // SP 811 definitions make of it (common::US_SHEET_UNITS). If mettle
    // applies those definitions, it reads both tables as the same numbers
    // to the last bit, and the two models must agree to rounding; any other
    // factor (even 6.894757 for the ksi, a 4e-8 change) moves the estimates
    // far beyond 1e-9, because training turns a change in the data into a
    // change of the fit of at least the same relative size
    let w = Workdir::new();
    let records = welds(200, 21);
    let read_back: Vec<common::Weld> = records
        .iter()
        .map(|r| common::through_units(r, &US_SHEET_UNITS))
        .collect();
    let fresh = welds(50, 22);
    let fresh_back: Vec<common::Weld> = fresh
        .iter()
        .map(|r| common::through_units(r, &US_SHEET_UNITS))
        .collect();
    // the SI side is written from the converted values; the US side from
    // the records, which mettle converts itself
    let (si, us) =
        estimates_in_both_unit_systems(&w, (&read_back, &fresh_back), (&records, &fresh));
    same_domain_calls(&si, &us);
    for (a, b) in si.iter().zip(&us) {
        for key in ESTIMATE_KEYS {
            let (x, y) = (field(a, key), field(b, key));
            assert!(
                (x - y).abs() <= 1e-9 * x.abs().max(1.0),
                "{key}: {x} (internal units) vs {y} (US units)\n{a}\n{b}"
            );
        }
    }
    // estimates in the declared unit are the same numbers in ksi; the
    // double-precision factor is the NIST SP 811 one (6.894757 MPa per ksi
    // in its table, via the trade-formulas reference [S])
    assert!((MPA_PER_KSI_EXACT - 6.894757).abs() < 5e-7);
    let from_definitions = 1000.0 * 4.4482216152605 / (0.0254 * 0.0254) / 1.0e6;
    assert!((MPA_PER_KSI_EXACT - from_definitions).abs() < 1e-14);
    let ksi = predict(&w, "us.json", "us_new.csv", "declared");
    for (a, b) in us.iter().zip(&ksi) {
        assert_eq!(b["unit"], "ksi");
        for key in ESTIMATE_KEYS {
            let (mpa, k) = (field(a, key), field(b, key));
            assert!(
                (k * MPA_PER_KSI_EXACT - mpa).abs() <= 1e-12 * mpa.abs(),
                "{key}: {k} ksi vs {mpa} MPa"
            );
        }
    }
}

/// Per target of the model file `model`: whether its noise varies with the
/// inputs, and the varying-noise option's lead in standard errors
/// (`varying_margin_se`, recorded when both noise models were judged).
fn noise_choices(w: &Workdir, model: &str) -> Vec<(bool, f64)> {
    let text = std::fs::read_to_string(w.path(model)).expect("model file");
    let m: Value = serde_json::from_str(&text).expect("model JSON");
    m["targets"]
        .as_array()
        .expect("targets")
        .iter()
        .map(|t| {
            let noise = &t["committee"]["selection"]["noise"];
            let varying = noise["varying"].as_bool().expect("noise.varying");
            let margin = noise["varying_margin_se"]
                .as_f64()
                .unwrap_or_else(|| panic!("no varying_margin_se in {noise}"));
            (varying, margin)
        })
        .collect()
}

#[test]
fn the_same_records_in_other_units_give_a_model_equal_within_the_fit_tolerance() {
    // the same records written from internal values in both unit systems:
    // converting there and back changes some values in the last bit, and
    // the fit, whose hyperparameters are re-estimated only to 1 %
    // (prec::HYPER_REL_TOL), then lands a little elsewhere. What may differ
    // is bounded by that tolerance: means within 5 % of an estimate's sd,
    // the sd itself within 1 %. A wrong conversion moves the estimates by
    // far more (a 1 % error in the strength unit alone moves them ~5 MPa,
    // half an sd).
    //
    // One discrete choice may still part: the noise model, kept constant
    // unless varying noise leads by more than one standard error on the
    // held-out part (prec::NOISE_PARSIMONY_SE). Its lead is itself a fitted
    // number, and must agree between the unit systems as closely as the
    // fit; where the two leads straddle the threshold the models may
    // differ in that choice alone, and their estimates are not compared.
    // Two invented archives: at least one must be compared in full.
    let mut compared = 0;
    for (seed_records, seed_fresh) in [(21, 22), (31, 32)] {
        let w = Workdir::new();
        let records = welds(200, seed_records);
        let fresh = welds(50, seed_fresh);
        let (si, us) = estimates_in_both_unit_systems(&w, (&records, &fresh), (&records, &fresh));
        let (cs, cu) = (noise_choices(&w, "si.json"), noise_choices(&w, "us.json"));
        eprintln!("records seed {seed_records}: noise choices {cs:?} (internal) {cu:?} (US)");
        for ((vs, ms), (vu, mu)) in cs.iter().zip(&cu) {
            assert!(
                (ms - mu).abs() <= MARGIN_TOLERANCE_SE,
                "records seed {seed_records}: varying noise leads by {ms} SE (internal units) \
                 against {mu} SE (US units)"
            );
            if vs != vu {
                let threshold = 1.0; // prec::NOISE_PARSIMONY_SE
                assert!(
                    (ms - threshold) * (mu - threshold) <= 0.0,
                    "records seed {seed_records}: the noise choices differ although both \
                     leads ({ms}, {mu} SE) lie on one side of the threshold"
                );
            }
        }
        if cs.iter().zip(&cu).any(|(a, b)| a.0 != b.0) {
            continue;
        }
        compared += 1;
        same_domain_calls(&si, &us);
        same_estimates_inside_the_domain(&si, &us);
    }
    assert!(
        compared >= 1,
        "no archive had the same noise choices in both unit systems"
    );
}

/// How far the varying-noise lead (in standard errors) may move between
/// two fits of the same records that differ in the last bit: the fit
/// tolerance moves both held-out scores (see the test above). Measured
/// when this was written: 0.22 SE on records seed 21 (1.053 against
/// 0.830, straddling the threshold), 0.009 on seed 31; the bound leaves
/// room for other CPUs' last bits. (The lead itself hardly depends on
/// the units: both scores shift by the same log of the target's scale.)
const MARGIN_TOLERANCE_SE: f64 = 0.5;

/// Estimates of two models of the same records, inside the training
/// domain: means and bounds within 5 % of an estimate's sd, the sd within
/// 1 % (why: the test above).
fn same_estimates_inside_the_domain(si: &[Value], us: &[Value]) {
    // outside the training domain no data hold the fit in place, and the
    // two fits may part further: only rows inside it are compared
    let inside: Vec<(&Value, &Value)> = si
        .iter()
        .zip(us)
        .filter(|(a, _)| a["in_domain"] == true)
        .collect();
    assert!(
        inside.len() >= 30,
        "{} of 50 rows inside the domain",
        inside.len()
    );
    for (a, b) in inside {
        let sd = field(a, "sd");
        for key in ["mean", "lo95", "hi95"] {
            let (x, y) = (field(a, key), field(b, key));
            assert!(
                (x - y).abs() <= 0.05 * sd,
                "{key}: {x} vs {y}, sd {sd}\n{a}\n{b}"
            );
        }
        assert!((field(b, "sd") / sd - 1.0).abs() <= 0.01, "{a}\n{b}");
    }
}

#[test]
fn csv_and_parquet_of_the_same_mixed_unit_table_give_identical_models() {
    let w = Workdir::new();
    let records = welds(200, 31);
    w.write("us.toml", weld_schema(&US_SHEET_UNITS));
    std::fs::create_dir(w.path("csv")).expect("mkdir");
    std::fs::create_dir(w.path("parquet")).expect("mkdir");
    // the same file name in two folders: the model records the name of the
    // file it was trained on, and the format is recognised by content
    w.write("csv/welds", weld_csv(&records, &US_SHEET_UNITS));
    weld_parquet(&w.path("parquet/welds"), &records, &US_SHEET_UNITS);
    assert_eq!(&w.read("parquet/welds")[..4], b"PAR1");
    train(&w, "csv/welds", "us.toml", "from_csv.json");
    train(&w, "parquet/welds", "us.toml", "from_parquet.json");
    let (a, b) = (w.read("from_csv.json"), w.read("from_parquet.json"));
    assert!(a == b, "the model files differ");

    // under their usual names the files differ in the recorded name only
    w.write("welds.csv", weld_csv(&records, &US_SHEET_UNITS));
    weld_parquet(&w.path("welds.parquet"), &records, &US_SHEET_UNITS);
    train(&w, "welds.csv", "us.toml", "a.json");
    train(&w, "welds.parquet", "us.toml", "b.json");
    let mut ja: Value = serde_json::from_slice(&w.read("a.json")).expect("JSON");
    let mut jb: Value = serde_json::from_slice(&w.read("b.json")).expect("JSON");
    assert_eq!(ja["training"]["data_file"], "welds.csv");
    assert_eq!(jb["training"]["data_file"], "welds.parquet");
    assert_eq!(ja["training"]["wall_seconds"], Value::Null);
    ja["training"]["data_file"] = Value::Null;
    jb["training"]["data_file"] = Value::Null;
    assert!(ja == jb, "models differ beyond the recorded file name");
    // and the fingerprint of the training rows is the same as above
    let first: Value = serde_json::from_slice(&a).expect("JSON");
    assert_eq!(
        ja["training"]["data_sha256"],
        first["training"]["data_sha256"]
    );
}

/// Parquet files of another writer: pyarrow 26.0.1 wrote one table six ways
/// (tests/reference/pyarrow_parquet_files.py: compression none, snappy,
/// gzip, zstd, lz4 and brotli; data pages of version 1.0 and 2.0;
/// dictionary and plain encoding; several row groups; pages of a few hundred
/// bytes; missing values; text, float, integer and boolean columns) and the
/// same table as CSV with Python's csv module. Each Parquet file must pass
/// the plausibility checks run before polars decodes it and read cell for
/// cell as the CSV does.
#[test]
fn parquet_files_written_by_pyarrow_read_as_written() {
    use mettle::data::Table;
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/pyarrow");
    let csv = Table::read(&dir.join("expected.csv")).expect("expected.csv");
    assert_eq!(csv.n_rows(), 400);
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("tests/data/pyarrow")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "parquet"))
        .collect();
    files.sort();
    assert_eq!(files.len(), 6, "{files:?}");
    for f in &files {
        let t = Table::read(f).unwrap_or_else(|e| panic!("{}: {e}", f.display()));
        assert_eq!(t.names(), csv.names(), "{}", f.display());
        assert_eq!(t.n_rows(), csv.n_rows(), "{}", f.display());
        for (i, name) in csv.names().iter().enumerate() {
            if name == "id" {
                for row in 0..t.n_rows() {
                    assert_eq!(
                        t.cell_text(i, row),
                        csv.cell_text(i, row),
                        "{}",
                        f.display()
                    );
                }
            } else {
                assert_eq!(
                    t.numeric_optional(name).expect("numbers"),
                    csv.numeric_optional(name).expect("numbers"),
                    "{} column {name}",
                    f.display()
                );
            }
        }
    }
}
