//! Helpers shared by the integration tests that run the real `mettle`
//! binary: a private working directory and an invented fixture table.
#![allow(dead_code)] // each test crate uses a different subset

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
    3.0 * (2.0 * x1).sin() + 0.5 * x2
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
