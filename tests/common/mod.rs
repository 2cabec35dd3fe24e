//! Helpers shared by the integration tests that run the real `mettle`
//! binary: a private working directory and an invented fixture table.
#![allow(dead_code)] // each test crate uses a different subset

use mettle::fixedmath::FixedMath;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;

/// Noise sd of the fixture's target (the generator's own setting).
pub const FIXTURE_NOISE_SD: f64 = 0.2;

/// The fixture's noise-free function: y = 3·sin(2·x1) + 0.5·x2.
pub fn fixture_truth(x1: f64, x2: f64) -> f64 {
    3.0 * (2.0 * x1).sin_fixed() + 0.5 * x2
}

/// `n` rows of x1 ~ U(−1, 1), x2 ~ U(0, 2), y = truth + N(0, 0.2²), as CSV
/// text with the header `x1,x2,y`. Invented data.
pub fn fixture_csv(n: usize, seed: u64) -> String {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let noise = Normal::new(0.0, FIXTURE_NOISE_SD).expect("positive sd");
    let mut s = String::from("x1,x2,y\n");
    for _ in 0..n {
        let x1: f64 = rng.random_range(-1.0..1.0);
        let x2: f64 = rng.random_range(0.0..2.0);
        let y = fixture_truth(x1, x2) + noise.sample(&mut rng);
        writeln!(s, "{x1},{x2},{y}").expect("write to string");
    }
    s
}

/// Set column `col` (a header name) of data row `row` (1-based) of a CSV
/// split into lines (header first) to `cell`.
pub fn set_cell(lines: &mut [String], row: usize, col: &str, cell: &str) {
    let k = lines[0]
        .split(',')
        .position(|h| h == col)
        .unwrap_or_else(|| panic!("no column {col}"));
    let mut cells: Vec<String> = lines[row].split(',').map(str::to_string).collect();
    cells[k] = cell.to_string();
    lines[row] = cells.join(",");
}

/// CSV text with its header replaced by `header` and every data row by
/// `row(cells)` (each line gets its newline back).
pub fn with_rows(text: &str, header: &str, row: impl Fn(&[f64]) -> String) -> String {
    let mut s = format!("{header}\n");
    for l in text.lines().skip(1) {
        let v: Vec<f64> = l
            .split(',')
            .map(|c| c.parse().expect("a numeric cell"))
            .collect();
        s.push_str(&row(&v));
        s.push('\n');
    }
    s
}

/// A private temporary directory in which the binary is run.
pub struct Workdir {
    dir: tempfile::TempDir,
}

impl Default for Workdir {
    fn default() -> Self {
        Self::new()
    }
}

impl Workdir {
    /// A fresh, empty directory (removed when dropped).
    pub fn new() -> Self {
        Workdir {
            dir: tempfile::Builder::new()
                .prefix("mettle-test-")
                .tempdir()
                .expect("create a temporary directory"),
        }
    }

    /// The directory itself.
    pub fn root(&self) -> &Path {
        self.dir.path()
    }

    /// `name` inside the directory.
    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    /// Write `text` to `name` inside the directory and return its path.
    pub fn write(&self, name: &str, text: impl AsRef<[u8]>) -> PathBuf {
        let p = self.path(name);
        std::fs::write(&p, text).expect("write fixture file");
        p
    }

    /// Read `name` inside the directory.
    pub fn read(&self, name: &str) -> Vec<u8> {
        std::fs::read(self.path(name)).unwrap_or_else(|e| panic!("read {name}: {e}"))
    }

    /// Names of the entries of the directory, sorted.
    pub fn entries(&self) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(self.root())
            .expect("list the working directory")
            .map(|e| {
                e.expect("directory entry")
                    .file_name()
                    .to_string_lossy()
                    .into_owned()
            })
            .collect();
        v.sort();
        v
    }

    /// The binary, to be run inside the directory, with BLAS single-threaded.
    pub fn command(&self, args: &[&str]) -> Command {
        let mut c = Command::new(env!("CARGO_BIN_EXE_mettle"));
        c.args(args)
            .current_dir(self.root())
            .env("OPENBLAS_NUM_THREADS", "1");
        c
    }

    /// Run `command` and return its output, whatever the exit status.
    pub fn run_command(&self, mut c: Command) -> Output {
        c.output().expect("start the mettle binary")
    }

    /// Run the binary with `args`.
    pub fn run(&self, args: &[&str]) -> Output {
        self.run_command(self.command(args))
    }

    /// Run the binary with `args`; panic with the details unless it exits 0.
    pub fn ok(&self, args: &[&str]) -> Output {
        let out = self.run(args);
        expect_code(args, &out, 0);
        out
    }

    /// Run the binary with `args`; panic with the details unless it exits
    /// with `code`.
    pub fn fails(&self, args: &[&str], code: i32) -> Output {
        let out = self.run(args);
        expect_code(args, &out, code);
        out
    }
}

/// Panic with the command, status, stdout and stderr unless `out` exited
/// with `code`.
pub fn expect_code(args: &[&str], out: &Output, code: i32) {
    if out.status.code() != Some(code) {
        panic!("expected exit code {code}\n{}", describe(args, out));
    }
}

/// The command, status, stdout and stderr, for failure messages.
pub fn describe(args: &[&str], out: &Output) -> String {
    format!(
        "cmd: mettle {}\nstatus: {}\n--- stdout ---\n{}\n--- stderr ---\n{}",
        args.join(" "),
        out.status,
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    )
}

/// Standard output as text.
pub fn stdout(out: &Output) -> String {
    String::from_utf8_lossy(&out.stdout).into_owned()
}

/// Standard error as text.
pub fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

/// One invented weld record, in internal units: contents in wt%, preheat in
/// °C, heat input in kJ/mm, plate thickness in mm, tensile strength in MPa.
#[derive(Clone, Copy, Debug)]
pub struct Weld {
    pub c: f64,
    pub si: f64,
    pub mn: f64,
    pub b: f64,
    pub preheat: f64,
    pub heat_input: f64,
    pub thickness: f64,
    pub uts: f64,
}

/// `n` invented weld records. The strength is an invented smooth function of
/// composition, heat input and thickness plus N(0, 8²) MPa; it is no
/// metallurgical relation.
pub fn welds(n: usize, seed: u64) -> Vec<Weld> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let noise = Normal::new(0.0, 8.0).expect("positive sd");
    (0..n)
        .map(|_| {
            let c: f64 = rng.random_range(0.05..0.20);
            let si: f64 = rng.random_range(0.10..0.50);
            let mn: f64 = rng.random_range(0.60..1.60);
            let b: f64 = rng.random_range(0.0..0.003);
            let preheat: f64 = rng.random_range(20.0..150.0);
            let heat_input: f64 = rng.random_range(0.8..2.5);
            let thickness: f64 = rng.random_range(8.0..40.0);
            let uts = 380.0 + 700.0 * c + 60.0 * mn + 40.0 * si + 3000.0 * b - 30.0 * heat_input
                + 0.8 * thickness
                - 0.1 * preheat
                + noise.sample(&mut rng);
            Weld {
                c,
                si,
                mn,
                b,
                preheat,
                heat_input,
                thickness,
                uts,
            }
        })
        .collect()
}

/// One column's unit in a weld table: its spelling in a schema, and the
/// conversions from and to the internal unit.
#[derive(Clone, Copy, Debug)]
pub struct ColumnUnit {
    pub symbol: &'static str,
    pub from_internal: fn(f64) -> f64,
    pub to_internal: fn(f64) -> f64,
}

/// The units a weld table is written in (contents other than B are always
/// in wt%).
#[derive(Clone, Copy, Debug)]
pub struct WeldUnits {
    pub b: ColumnUnit,
    pub preheat: ColumnUnit,
    pub heat_input: ColumnUnit,
    pub thickness: ColumnUnit,
    pub uts: ColumnUnit,
}

/// 1 ksi in MPa, to double precision, from the exact definitions NIST SP 811
/// gives: 1 lbf = 4.4482216152605 N, 1 in = 0.0254 m; 1 ksi = 1000 lbf/in²
/// = 6.894757293168361 MPa.
pub const MPA_PER_KSI_EXACT: f64 = 6.894_757_293_168_361;

const SAME: ColumnUnit = ColumnUnit {
    symbol: "",
    from_internal: |x| x,
    to_internal: |x| x,
};

/// Every column in the internal unit of its quantity.
pub const INTERNAL_UNITS: WeldUnits = WeldUnits {
    b: ColumnUnit {
        symbol: "wt%",
        ..SAME
    },
    preheat: ColumnUnit {
        symbol: "degC",
        ..SAME
    },
    heat_input: ColumnUnit {
        symbol: "kJ/mm",
        ..SAME
    },
    thickness: ColumnUnit {
        symbol: "mm",
        ..SAME
    },
    uts: ColumnUnit {
        symbol: "MPa",
        ..SAME
    },
};

/// The units of an older US record sheet, converted with the NIST SP 811
/// definitions: 1 ppm (by mass) = 0.0001 wt%; °C = (°F − 32)/1.8;
/// 1 J/mm = 0.001 kJ/mm; 1 in = 25.4 mm (exact); ksi as
/// [`MPA_PER_KSI_EXACT`].
pub const US_SHEET_UNITS: WeldUnits = WeldUnits {
    b: ColumnUnit {
        symbol: "ppm",
        from_internal: |x| x / 1.0e-4,
        to_internal: |x| x * 1.0e-4,
    },
    preheat: ColumnUnit {
        symbol: "degF",
        from_internal: |x| x * 1.8 + 32.0,
        to_internal: |x| (x - 32.0) / 1.8,
    },
    heat_input: ColumnUnit {
        symbol: "J/mm",
        from_internal: |x| x * 1000.0,
        to_internal: |x| x / 1000.0,
    },
    thickness: ColumnUnit {
        symbol: "in",
        from_internal: |x| x / 25.4,
        to_internal: |x| x * 25.4,
    },
    uts: ColumnUnit {
        symbol: "ksi",
        from_internal: |x| x / MPA_PER_KSI_EXACT,
        to_internal: |x| x * MPA_PER_KSI_EXACT,
    },
};

/// The weld as a table in `units` reads back in internal units: each value
/// written in `units` and converted back with the definitions above (equal
/// to `w` up to the last bit or so).
pub fn through_units(w: &Weld, units: &WeldUnits) -> Weld {
    let there_and_back = |u: &ColumnUnit, x: f64| (u.to_internal)((u.from_internal)(x));
    Weld {
        b: there_and_back(&units.b, w.b),
        preheat: there_and_back(&units.preheat, w.preheat),
        heat_input: there_and_back(&units.heat_input, w.heat_input),
        thickness: there_and_back(&units.thickness, w.thickness),
        uts: there_and_back(&units.uts, w.uts),
        ..*w
    }
}

/// Header of a weld table.
pub const WELD_HEADER: [&str; 9] = [
    "weld_id",
    "c",
    "si",
    "mn",
    "b",
    "preheat",
    "heat_input",
    "thickness",
    "uts",
];

/// The cells of each weld, as numbers in `units` (the identifier aside).
pub fn weld_values(w: &Weld, units: &WeldUnits) -> [f64; 8] {
    [
        w.c,
        w.si,
        w.mn,
        (units.b.from_internal)(w.b),
        (units.preheat.from_internal)(w.preheat),
        (units.heat_input.from_internal)(w.heat_input),
        (units.thickness.from_internal)(w.thickness),
        (units.uts.from_internal)(w.uts),
    ]
}

/// A weld table as CSV text in `units`, identifiers W1, W2, ...
pub fn weld_csv(rows: &[Weld], units: &WeldUnits) -> String {
    let mut s = WELD_HEADER.join(",");
    s.push('\n');
    for (i, w) in rows.iter().enumerate() {
        let cells: Vec<String> = weld_values(w, units)
            .iter()
            .map(|x| x.to_string())
            .collect();
        writeln!(s, "W{},{}", i + 1, cells.join(",")).expect("write to string");
    }
    s
}

/// A schema for a weld table written in `units`: C and Mn are inputs, the
/// heat input too; Si, B, preheat and thickness serve the derived Pcm and
/// t8/5; C must lie in 0–0.5 wt%; the strength is the target.
pub fn weld_schema(units: &WeldUnits) -> String {
    format!(
        r#"mettle_schema = 1

[[column]]
name = "weld_id"
role = "identifier"

[[column]]
name = "c"
role = "input"
unit = "wt%"
stands_for = "C"
min = 0.0
max = 0.5

[[column]]
name = "si"
role = "auxiliary"
unit = "wt%"
stands_for = "Si"

[[column]]
name = "mn"
role = "input"
unit = "wt%"
stands_for = "Mn"

[[column]]
name = "b"
role = "auxiliary"
unit = "{}"
stands_for = "B"

[[column]]
name = "preheat"
role = "auxiliary"
unit = "{}"
stands_for = "preheat"

[[column]]
name = "heat_input"
role = "input"
unit = "{}"
stands_for = "heat_input"

[[column]]
name = "thickness"
role = "auxiliary"
unit = "{}"
stands_for = "thickness"

[[column]]
name = "uts"
role = "target"
unit = "{}"

[[derived]]
spec = "pcm"

[[derived]]
spec = "t85:butt_fill"
"#,
        units.b.symbol,
        units.preheat.symbol,
        units.heat_input.symbol,
        units.thickness.symbol,
        units.uts.symbol
    )
}

/// A column for [`write_parquet`].
pub enum ParquetColumn {
    Text(Vec<Option<String>>),
    Number(Vec<Option<f64>>),
}

/// Write a Parquet file with polars directly (not through mettle), text
/// columns as strings and numbers as 64-bit floats; NaN stays NaN.
pub fn write_parquet(path: &Path, columns: Vec<(&str, ParquetColumn)>) {
    use polars::prelude::{Column, DataFrame, ParquetWriter};
    let height = match columns.first() {
        Some((_, ParquetColumn::Text(v))) => v.len(),
        Some((_, ParquetColumn::Number(v))) => v.len(),
        None => 0,
    };
    let cols: Vec<Column> = columns
        .into_iter()
        .map(|(name, c)| match c {
            ParquetColumn::Text(v) => Column::new(name.into(), v),
            ParquetColumn::Number(v) => Column::new(name.into(), v),
        })
        .collect();
    let mut df = DataFrame::new(height, cols).expect("a frame of equal-length columns");
    let f = std::fs::File::create(path).expect("create the Parquet file");
    ParquetWriter::new(f)
        .finish(&mut df)
        .expect("write the Parquet file");
}

/// A weld table as Parquet in `units` (the same cells as [`weld_csv`]).
pub fn weld_parquet(path: &Path, rows: &[Weld], units: &WeldUnits) {
    let mut columns = vec![(
        WELD_HEADER[0],
        ParquetColumn::Text((1..=rows.len()).map(|i| Some(format!("W{i}"))).collect()),
    )];
    for (k, name) in WELD_HEADER[1..].iter().enumerate() {
        columns.push((
            name,
            ParquetColumn::Number(
                rows.iter()
                    .map(|w| Some(weld_values(w, units)[k]))
                    .collect(),
            ),
        ));
    }
    write_parquet(path, columns);
}

/// `Ok` when two outputs hold the same text and the same numbers to within
/// 1e-9 relative (at least 1e-9 absolute), else the first difference:
/// tokens are cut at commas, colons, brackets and white space. With BLAS
/// the variances of estimates made in blocks of different row counts
/// differed in the last bits (its kernels summed in an order that depended
/// on the matrix shape), and the model part of the sd, taken from a
/// difference of variances, magnified that (2.6e-11 relative seen in one
/// row); `mettle::linalg` sums in one order whatever the shape.
pub fn same_up_to_rounding(a: &[u8], b: &[u8]) -> Result<(), String> {
    let cut = |s: &[u8]| -> Vec<String> {
        String::from_utf8_lossy(s)
            .split(|c: char| c == ',' || c == ':' || c == '[' || c == ']' || c.is_whitespace())
            .map(str::to_string)
            .collect()
    };
    let (ta, tb) = (cut(a), cut(b));
    if ta.len() != tb.len() {
        return Err(format!("{} tokens against {}", ta.len(), tb.len()));
    }
    for (k, (x, y)) in ta.iter().zip(&tb).enumerate() {
        let close = match (x.parse::<f64>(), y.parse::<f64>()) {
            (Ok(p), Ok(q)) => (p - q).abs() <= 1e-9 * p.abs().max(1.0),
            _ => false,
        };
        if x != y && !close {
            return Err(format!("token {k}: '{x}' against '{y}'"));
        }
    }
    Ok(())
}

/// The rows of `predict --format json` output (one object: caution,
/// id_column, targets with each target's unit, interval kind and
/// distribution form, and rows). For a one-target model each row gets that
/// target's estimate, interval kind and unit merged in, so a test reads
/// `r["mean"]`; for several targets rows are returned as written.
pub fn predict_rows(stdout: &[u8]) -> Vec<serde_json::Value> {
    let v: serde_json::Value = serde_json::from_slice(stdout)
        .unwrap_or_else(|e| panic!("predict JSON: {e}\n{}", String::from_utf8_lossy(stdout)));
    let targets = v["targets"].as_object().expect("predict JSON has targets");
    let rows = v["rows"].as_array().expect("predict JSON has rows");
    if targets.len() != 1 {
        return rows.clone();
    }
    let (name, form) = targets.iter().next().expect("one target");
    rows.iter()
        .map(|r| {
            let mut r = r.clone();
            let e = r["estimates"][name].clone();
            let o = r.as_object_mut().expect("row object");
            o.insert("target".into(), name.clone().into());
            for k in ["interval_kind", "unit"] {
                o.insert(k.into(), form[k].clone());
            }
            if let Some(e) = e.as_object() {
                o.extend(e.clone());
            }
            r
        })
        .collect()
}

/// An invented workbook's bytes, written with rust_xlsxwriter (the writer
/// mettle itself uses; the reader under test is calamine): with a
/// `cover_note`, a first sheet `cover` holding it; then sheet `name` holding
/// `csv` (header + rows), numbers stored as numbers.
pub fn workbook_bytes(name: &str, csv: &str, cover_note: Option<&str>) -> Vec<u8> {
    let mut book = rust_xlsxwriter::Workbook::new();
    if let Some(note) = cover_note {
        let cover = book.add_worksheet();
        cover.set_name("cover").expect("name");
        cover.write_string(0, 0, note).expect("cell");
    }
    let ws = book.add_worksheet();
    ws.set_name(name).expect("name");
    for (i, line) in csv.lines().enumerate() {
        for (j, cell) in line.split(',').enumerate() {
            let (r, c) = (i as u32, j as u16);
            match cell.parse::<f64>() {
                Ok(v) if i > 0 => ws.write_number(r, c, v).map(|_| ()),
                _ => ws.write_string(r, c, cell).map(|_| ()),
            }
            .expect("cell");
        }
    }
    book.save_to_buffer().expect("workbook bytes")
}
