//! Fuzzing of the three readers that take files from outside: the table
//! reader (CSV and Parquet), the schema parser and the model loader (issue
//! 8, point 3; docs/reliability.md). Each property feeds random bytes, or a
//! file of the seed corpus in tests/corpus/ changed by random edits, and
//! asks only that the reader returns — `Ok` or `Err`, never a panic. A
//! model that loads is also used to predict, so that a file passing the
//! loader's checks cannot crash the arithmetic behind them.
//!
//! In `make test` each property runs a bounded number of cases from a fixed
//! seed (a few seconds in all). A longer run, with a fresh seed:
//!
//! ```text
//! PROPTEST_CASES=200000 PROPTEST_RNG_SEED=$RANDOM cargo test --release --test fuzz
//! ```
//!
//! A failing case is shrunk and written to tests/fuzz.proptest-regressions,
//! which is replayed first on every later run. A case that aborts the
//! process (a failed allocation is not a panic) leaves proptest no time to
//! write it: run with `METTLE_FUZZ_LAST=/tmp/last` and the table input
//! being read is in `/tmp/last.t.csv` or `/tmp/last.t.parquet`.

use std::path::{Path, PathBuf};

use mettle::data::schema::Schema;
use mettle::data::Table;
use mettle::model::Model;
use proptest::prelude::*;
use proptest::test_runner::{Config, RngSeed};
use serde_json::Value;

/// Cases per property in `make test`, unless PROPTEST_CASES says otherwise.
const QUICK_CASES: u32 = 1000;

/// Seed of the quick run, unless PROPTEST_RNG_SEED says otherwise.
const QUICK_SEED: u64 = 0x6d65_7474_6c65;

fn config() -> Config {
    let mut c = Config::default();
    if std::env::var_os("PROPTEST_CASES").is_none() {
        c.cases = QUICK_CASES;
    }
    if std::env::var_os("PROPTEST_RNG_SEED").is_none() {
        c.rng_seed = RngSeed::Fixed(QUICK_SEED);
    }
    c
}

/// The seed files of `tests/corpus/<kind>/`, sorted by name.
fn seeds(kind: &str) -> Vec<Vec<u8>> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/corpus")
        .join(kind);
    let mut paths: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("{}: {e}", dir.display()))
        .map(|e| e.expect("directory entry").path())
        .collect();
    paths.sort();
    let files: Vec<Vec<u8>> = paths
        .iter()
        .map(|p| std::fs::read(p).expect("read a seed file"))
        .collect();
    assert!(!files.is_empty(), "no seed files in {}", dir.display());
    files
}

/// Bytes that matter to the formats: delimiters, quotes, line ends, parts
/// of numbers, a byte-order mark, TOML and JSON punctuation.
const INTERESTING: &[u8] = b",;\t\"'\r\n-+.eE0129 nNaI[]{}=:#\\\xEF\xBB\xBF\xFF\x00";

/// One edit of a byte string: insert, overwrite, delete, truncate, or
/// copy a slice elsewhere.
#[derive(Clone, Debug)]
enum Edit {
    Insert(usize, u8),
    Set(usize, u8),
    Delete(usize),
    Truncate(usize),
    Splice(usize, usize, usize),
}

fn a_byte() -> impl Strategy<Value = u8> {
    prop_oneof![any::<u8>(), proptest::sample::select(INTERESTING)]
}

fn an_edit() -> impl Strategy<Value = Edit> {
    prop_oneof![
        4 => (any::<usize>(), a_byte()).prop_map(|(p, b)| Edit::Insert(p, b)),
        4 => (any::<usize>(), a_byte()).prop_map(|(p, b)| Edit::Set(p, b)),
        3 => any::<usize>().prop_map(Edit::Delete),
        1 => any::<usize>().prop_map(Edit::Truncate),
        1 => (any::<usize>(), any::<usize>(), 1usize..40)
            .prop_map(|(from, to, n)| Edit::Splice(from, to, n)),
    ]
}

fn apply(mut b: Vec<u8>, edits: &[Edit]) -> Vec<u8> {
    for e in edits {
        let at = |p: usize, len: usize| if len == 0 { 0 } else { p % (len + 1) };
        match *e {
            Edit::Insert(p, x) => {
                let i = at(p, b.len());
                b.insert(i, x);
            }
            Edit::Set(p, x) => {
                if !b.is_empty() {
                    let i = p % b.len();
                    b[i] = x;
                }
            }
            Edit::Delete(p) => {
                if !b.is_empty() {
                    let i = p % b.len();
                    b.remove(i);
                }
            }
            Edit::Truncate(p) => {
                let i = at(p, b.len());
                b.truncate(i);
            }
            Edit::Splice(from, to, n) => {
                if !b.is_empty() {
                    let from = from % b.len();
                    let piece: Vec<u8> = b[from..(from + n).min(b.len())].to_vec();
                    let to = at(to, b.len());
                    b.splice(to..to, piece);
                }
            }
        }
    }
    b
}

/// A seed file of `kind` with 1 to 8 random edits.
fn mutated(kind: &str) -> impl Strategy<Value = Vec<u8>> {
    let files = seeds(kind);
    (0..files.len(), proptest::collection::vec(an_edit(), 1..8))
        .prop_map(move |(i, edits)| apply(files[i].clone(), &edits))
}

/// Random bytes of up to `max` bytes, half of them from [`INTERESTING`].
fn noise(max: usize) -> impl Strategy<Value = Vec<u8>> {
    proptest::collection::vec(a_byte(), 0..max)
}

/// Read `bytes` as a table file named `name` in a fresh directory, and
/// parse every cell of every column as a number.
///
/// With `METTLE_FUZZ_LAST=FILE` set, each input is first written to
/// `FILE.<name>` too, so that a case that aborts the process (which
/// proptest cannot record) is left behind.
fn read_table(bytes: &[u8], name: &str) {
    if let Some(last) = std::env::var_os("METTLE_FUZZ_LAST") {
        let mut last = PathBuf::from(last).into_os_string();
        last.push(format!(".{name}"));
        std::fs::write(&last, bytes).expect("write METTLE_FUZZ_LAST");
    }
    let dir = tempfile::tempdir().expect("a temporary directory");
    let path = dir.path().join(name);
    std::fs::write(&path, bytes).expect("write the table");
    if let Ok(t) = Table::read(&path) {
        for n in t.names().to_vec() {
            let _ = t.numeric_optional(&n);
        }
    }
}

// ---- the model loader, with edits made on the JSON tree

/// One step into a JSON value.
#[derive(Clone, Debug)]
enum Step {
    Key(String),
    Index(usize),
}

/// Every path in `v` (the root included), depth first.
fn paths(v: &Value, here: &mut Vec<Step>, out: &mut Vec<Vec<Step>>) {
    out.push(here.clone());
    match v {
        Value::Array(a) => {
            for (i, x) in a.iter().enumerate() {
                here.push(Step::Index(i));
                paths(x, here, out);
                here.pop();
            }
        }
        Value::Object(o) => {
            for (k, x) in o {
                here.push(Step::Key(k.clone()));
                paths(x, here, out);
                here.pop();
            }
        }
        _ => {}
    }
}

fn at_path<'a>(mut v: &'a mut Value, path: &[Step]) -> &'a mut Value {
    for s in path {
        v = match s {
            Step::Key(k) => &mut v[k.as_str()],
            Step::Index(i) => &mut v[*i],
        };
    }
    v
}

/// Values a tampered or damaged file might hold where another was.
fn replacement(k: usize, old: &Value) -> Value {
    match k % 16 {
        0 => Value::Null,
        1 => Value::from(true),
        2 => Value::from(0),
        3 => Value::from(-1),
        4 => Value::from(1e308),
        5 => Value::from(-1e308),
        6 => Value::from(5e-324),
        7 => Value::from(u64::MAX),
        8 => Value::from(i64::MIN),
        9 => Value::from(""),
        10 => Value::from("x"),
        11 => Value::Array(vec![]),
        12 => Value::Object(serde_json::Map::new()),
        13 => Value::Array(vec![Value::from(0.5)]),
        14 => match old.as_f64() {
            Some(x) => Value::from(-x * 3.0),
            None => Value::from(2),
        },
        _ => match old.as_u64() {
            Some(x) => Value::from(x.saturating_mul(1000).saturating_add(1)),
            None => Value::from(1_000_000_000u64),
        },
    }
}

/// Apply a tree edit `(which node, what)` to a model's JSON.
fn edit_tree(v: &mut Value, node: usize, what: usize) {
    let mut all = Vec::new();
    paths(v, &mut Vec::new(), &mut all);
    let path = &all[node % all.len()];
    let target = at_path(v, path);
    match (what % 4, &mut *target) {
        (1, Value::Array(a)) if !a.is_empty() => {
            let keep = what / 4 % a.len();
            a.truncate(keep);
        }
        (2, Value::Array(a)) if !a.is_empty() => {
            let first = a[0].clone();
            a.push(first);
        }
        (3, Value::Object(o)) if !o.is_empty() => {
            let key = o.keys().nth(what / 4 % o.len()).cloned();
            if let Some(key) = key {
                o.remove(&key);
            }
        }
        _ => {
            let new = replacement(what / 4, target);
            *target = new;
        }
    }
}

/// Load `bytes` as a model; when it loads, estimate three rows with it
/// (inside, at and far outside its inputs' ranges).
fn load_and_use(bytes: &[u8]) {
    let Ok(model) = Model::from_json(bytes, "fuzz.json") else {
        return;
    };
    let columns: Vec<(String, Vec<f64>)> = model
        .inputs
        .iter()
        .map(|i| (i.name.clone(), vec![0.5 * (i.min + i.max), i.min, 1e300]))
        .collect();
    if let Ok(table) = Table::from_columns("fuzz.csv", columns) {
        let _ = model.predict(&table);
    }
}

fn model_seeds() -> Vec<Value> {
    seeds("model")
        .iter()
        .map(|b| serde_json::from_slice(b).expect("a seed model is JSON"))
        .collect()
}

/// Every input the fuzzer found (tests/corpus/found/) is refused with an
/// error, not read and not a crash: each one is a damaged file.
#[test]
fn found_inputs_are_refused() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/corpus/found");
    let mut paths: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("tests/corpus/found")
        .map(|e| e.expect("directory entry").path())
        .collect();
    paths.sort();
    assert!(paths.len() >= 2, "{paths:?}");
    for p in paths {
        let e = Table::read(&p).expect_err("a damaged file is refused");
        let msg = e.to_string();
        assert!(
            msg.contains("the Parquet file is damaged"),
            "{}: {msg}",
            p.display()
        );
    }
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn csv_reader_survives_random_bytes(bytes in noise(600)) {
        read_table(&bytes, "t.csv");
    }

    #[test]
    fn csv_reader_survives_edited_seed_tables(bytes in mutated("csv")) {
        read_table(&bytes, "t.csv");
    }

    #[test]
    fn parquet_reader_survives_edited_seed_files(bytes in mutated("parquet")) {
        read_table(&bytes, "t.parquet");
    }

    #[test]
    fn schema_parser_survives_random_text(bytes in noise(400)) {
        let _ = Schema::from_toml(&String::from_utf8_lossy(&bytes), "fuzz.toml");
    }

    #[test]
    fn schema_parser_survives_edited_seed_schemas(bytes in mutated("schema")) {
        let _ = Schema::from_toml(&String::from_utf8_lossy(&bytes), "fuzz.toml");
    }

    #[test]
    fn model_loader_survives_edited_bytes(bytes in mutated("model")) {
        load_and_use(&bytes);
    }

    #[test]
    fn model_loader_survives_edited_json_trees(
        which in 0usize..16,
        edits in proptest::collection::vec((any::<usize>(), any::<usize>()), 1..4),
    ) {
        let all = model_seeds();
        let mut v = all[which % all.len()].clone();
        for (node, what) in edits {
            edit_tree(&mut v, node, what);
        }
        load_and_use(&serde_json::to_vec(&v).expect("serialise"));
    }
}
