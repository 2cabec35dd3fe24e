//! Every `mettle …` command shown in the README and the user guides runs.
//!
//! The command lines are taken from the fenced code blocks of each file, in
//! document order (`mettle …`, or `$ mettle …` before pasted output, with
//! `\` continuation lines joined; a synopsis with `[…]` or `...` is not a
//! command), and run through the real binary in a scratch folder that
//! sees the repository's `datasets/` and `models/` (the bundled invented
//! data) and has an empty `out/`. A command that exits non-zero, or any
//! panic, fails the test with the file and line of the command.
//!
//! Output pasted after a `$ mettle …` command (up to the end of its block)
//! is the document's worked example: each pasted line must be a line of
//! what the binary prints now, in the same order (a line `...` stands for
//! lines left out; blank lines are not compared), so the worked numbers
//! cannot drift from the program.

mod common;

use std::path::{Path, PathBuf};

use common::{describe, Workdir};

/// Files whose commands must run, in the order a reader meets them.
const DOCUMENTS: [&str; 5] = [
    "README.md",
    "models/README.md",
    "docs/guide-qa.md",
    "docs/guide-researcher.md",
    "docs/screening.md",
];

/// A documented command: its line, its arguments after "mettle", and the
/// output pasted after it (for `$ mettle …`).
struct Documented {
    line: usize,
    args: Vec<String>,
    pasted: Vec<String>,
}

/// Every command in `text`.
fn commands(text: &str) -> Vec<Documented> {
    let mut found = Vec::new();
    let mut in_block = false;
    let lines: Vec<&str> = text.lines().collect();
    let mut i = 0;
    while i < lines.len() {
        let t = lines[i].trim();
        let start = i + 1;
        i += 1;
        if t.starts_with("```") {
            in_block = !in_block;
            continue;
        }
        let shown_with_output = t.starts_with("$ mettle ");
        let Some(first) = t
            .strip_prefix("$ mettle ")
            .or_else(|| t.strip_prefix("mettle "))
        else {
            continue;
        };
        if !in_block {
            continue;
        }
        let mut command = first.to_string();
        while command.ends_with('\\') && i < lines.len() {
            command.pop();
            command.push(' ');
            command.push_str(lines[i].trim());
            i += 1;
        }
        if command.contains(" [") || command.contains("...") {
            continue; // a synopsis, not a command
        }
        assert!(
            !command.contains('"'),
            "line {start}: quote documented arguments only with '…'"
        );
        // a shell would strip the single quotes around a token
        let args: Vec<String> = command
            .split_whitespace()
            .map(|a| {
                let quoted = a.len() >= 2 && a.starts_with('\'') && a.ends_with('\'');
                assert!(
                    quoted || !a.contains('\''),
                    "line {start}: a quoted argument may not hold spaces"
                );
                a.trim_matches('\'').to_string()
            })
            .collect();
        let mut pasted = Vec::new();
        if shown_with_output {
            while i < lines.len() && !lines[i].trim_start().starts_with("```") {
                pasted.push(lines[i].trim_end().to_string());
                i += 1;
            }
        }
        found.push(Documented {
            line: start,
            args,
            pasted,
        });
    }
    found
}

/// The first pasted line (in order, `...` skipping) that the output lacks.
fn drifted<'a>(pasted: &'a [String], printed: &str) -> Option<&'a str> {
    let mut lines = printed.lines().map(str::trim_end);
    // blank lines carry nothing to check
    pasted
        .iter()
        .filter(|l| !l.trim().is_empty() && l.trim() != "...")
        .find(|want| !lines.any(|got| got == want.as_str()))
        .map(String::as_str)
}

fn link(from: &Path, to: &Path) {
    std::os::unix::fs::symlink(from, to).expect("symlink into the scratch folder");
}

/// A documented `mettle serve …` runs until stopped: it must start (on a
/// free loopback port instead of the documented one, which a second run
/// of the suite could hold), answer its page, and stop on SIGTERM with
/// exit status 0.
fn serve_starts_and_stops(w: &Workdir, args: &[&str], doc: &str, line: usize) {
    use std::io::{BufRead, BufReader, Read, Write};
    let mut c = w.command(args);
    c.args(["--listen", "127.0.0.1:0"])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped());
    let mut child = c.spawn().expect("start mettle serve");
    let err = child.stderr.take().expect("stderr");
    let mut addr = None;
    let mut seen = String::new();
    let mut lines = BufReader::new(err).lines();
    for l in lines.by_ref().map_while(Result::ok) {
        seen.push_str(&l);
        seen.push('\n');
        if let Some(rest) = l.split("listening on http://").nth(1) {
            addr = rest.split('/').next().map(str::to_string);
            break;
        }
    }
    let Some(addr) = addr else {
        let _ = child.kill();
        panic!("{doc}:{line}: mettle serve did not start\n{seen}");
    };
    // keep reading what it prints, so that its last lines find a reader
    let drain = std::thread::spawn(move || lines.map_while(Result::ok).count());
    let mut s = std::net::TcpStream::connect(&addr).expect("connect");
    s.write_all(b"GET / HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\r\n")
        .expect("send");
    let mut page = String::new();
    let _ = s.read_to_string(&mut page);
    assert!(page.starts_with("HTTP/1.1 200"), "{doc}:{line}: {page}");
    let killed = std::process::Command::new("kill")
        .args(["-TERM", &child.id().to_string()])
        .status()
        .expect("kill");
    assert!(killed.success());
    let status = child.wait().expect("wait");
    let _ = drain.join();
    assert!(
        status.success(),
        "{doc}:{line}: mettle serve ended with {status:?}"
    );
}

#[test]
fn documented_commands_run() {
    let repo = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let w = Workdir::new();
    link(&repo.join("datasets"), &w.path("datasets"));
    link(&repo.join("models"), &w.path("models"));
    std::fs::create_dir(w.path("out")).expect("out/");
    let mut n = 0;
    for doc in DOCUMENTS {
        let text = std::fs::read_to_string(repo.join(doc)).expect("document");
        for c in commands(&text) {
            let refs: Vec<&str> = c.args.iter().map(String::as_str).collect();
            if refs.first() == Some(&"serve") {
                serve_starts_and_stops(&w, &refs, doc, c.line);
                n += 1;
                continue;
            }
            let out = w.run(&refs);
            assert!(
                out.status.success(),
                "{doc}:{}: documented command failed\n{}",
                c.line,
                describe(&refs, &out)
            );
            // as a terminal shows it: what goes to stderr while the command
            // works (a chart written), then the output
            let printed = String::from_utf8_lossy(&out.stderr).to_string()
                + &String::from_utf8_lossy(&out.stdout);
            if let Some(line) = drifted(&c.pasted, &printed) {
                panic!(
                    "{doc}:{}: the worked output has drifted from the program's; this line is not printed (in order):\n{line}\n{}",
                    c.line,
                    describe(&refs, &out)
                );
            }
            n += 1;
        }
    }
    // the README alone shows eleven; a silent parse failure must not pass
    assert!(n >= 20, "only {n} documented commands found");
}
