//! Killing `mettle train` at any moment leaves the previous model file
//! byte for byte as it was and no partial file under its name (issue 8,
//! point 2; docs/reliability.md). The real binary is started on a fixture,
//! killed with SIGKILL after a delay drawn from a seeded generator (so a
//! failure can be replayed), and the directory is inspected: the model's
//! name holds either the earlier model or, when the run had finished
//! before the kill, the complete new model (byte-identical to an
//! uninterrupted run with the same seed); any other file left behind is
//! one of write_atomic's hidden `.mettle-*.tmp` temporaries, which no
//! command reads.

mod common;

use std::process::Stdio;
use std::time::Instant;

use common::{fixture_csv, Workdir};
use rand::{Rng, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

const TRAIN: [&str; 13] = [
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
    "4",
];

/// Kills per run of the test, and the seed of their moments.
const KILLS: usize = 8;
const KILL_SEED: u64 = 20_260_512;

#[test]
fn a_killed_train_leaves_the_earlier_model_intact_and_no_partial_file() {
    let w = Workdir::new();
    // the earlier model: another table, so that its bytes differ from the
    // new model's
    w.write("old.csv", fixture_csv(80, 2));
    w.ok(&[
        "train",
        "--data",
        "old.csv",
        "--target",
        "y",
        "--out",
        "m.json",
        "--hidden",
        "1..2",
        "--restarts",
        "1",
        "--quiet",
    ]);
    let earlier = w.read("m.json");
    w.write("train.csv", fixture_csv(300, 9));

    // an uninterrupted run: its duration scales the kill moments, its file
    // is what a run that finished before the kill must have written
    let started = Instant::now();
    let mut args = TRAIN.to_vec();
    args[6] = "complete.json";
    args.push("--quiet");
    w.ok(&args);
    let full = started.elapsed();
    let complete = w.read("complete.json");
    assert!(complete != earlier);
    std::fs::remove_file(w.path("complete.json")).expect("remove");

    let mut rng = Xoshiro256PlusPlus::seed_from_u64(KILL_SEED);
    let mut killed_mid_run = 0;
    for k in 0..KILLS {
        // the first kill comes almost at once (while the table is read),
        // the last well after the usual end (the run has most likely
        // finished: the complete-model branch), the others anywhere in the
        // run
        let frac: f64 = match k {
            0 => 0.0,
            k if k == KILLS - 1 => 1.5,
            _ => rng.random_range(0.02..0.95),
        };
        let delay = full.mul_f64(frac);
        let mut c = w.command(&TRAIN);
        c.arg("--quiet").stdout(Stdio::null()).stderr(Stdio::null());
        let mut child = c.spawn().expect("start mettle train");
        std::thread::sleep(delay);
        let finished = child.try_wait().expect("poll the child").is_some();
        child.kill().ok(); // SIGKILL; an error only means it had exited
        let status = child.wait().expect("reap the child");
        let now = w.read("m.json");
        let what = format!("kill {k} after {delay:?} (of {full:?}), status {status}");
        if now == earlier {
            killed_mid_run += usize::from(!finished && status.code().is_none());
        } else {
            assert!(
                now == complete,
                "{what}: m.json is neither the earlier model nor the complete new one ({} bytes)",
                now.len()
            );
            // put the earlier model back for the next kill
            w.write("m.json", &earlier);
        }
        for name in w.entries() {
            let expected = ["m.json", "old.csv", "train.csv"].contains(&name.as_str())
                || (name.starts_with(".mettle-") && name.ends_with(".tmp"));
            assert!(expected, "{what}: unexpected file {name} left behind");
        }
    }
    eprintln!(
        "{killed_mid_run} of {KILLS} kills landed mid-run; an uninterrupted run took {full:?}"
    );
    // the seeded moments must really catch runs in progress, or the test
    // has checked nothing
    assert!(
        killed_mid_run >= KILLS / 2 - 1,
        "only {killed_mid_run} of {KILLS} kills landed mid-run"
    );
    // and a later train still works in the directory the kills left
    let mut args = TRAIN.to_vec();
    args.push("--quiet");
    w.ok(&args);
    assert!(w.read("m.json") == complete);
}
