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
    for want in pasted
        .iter()
        .filter(|l| !l.trim().is_empty() && l.trim() != "...")
    {
        if !lines.any(|got| got == want) {
            return Some(want);
        }
    }
    None
}

fn link(from: &Path, to: &Path) {
    std::os::unix::fs::symlink(from, to).expect("symlink into the scratch folder");
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
