//! Imports run one way: every module of the library imports only from
//! modules on lower layers of the order stated in DEVELOPERS.md (the block
//! between `<!-- layers -->` and `<!-- /layers -->`). The check reads each
//! file under `src/` as text: every `crate::NAME` path and every name in a
//! `use crate::{…}` group, outside comments, is an import of module NAME.
//! Modules on one layer may not import each other. `super::` paths are not
//! followed (inside a folder module they stay within it). The layer order
//! is the project's own design rule (DEVELOPERS.md); no outside source.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Module name → layer, from DEVELOPERS.md's layer block: lines
/// `N  name name …`.
fn layers(developers_md: &str) -> BTreeMap<String, usize> {
    let start = developers_md
        .find("<!-- layers -->")
        .expect("DEVELOPERS.md has a <!-- layers --> block");
    let end = developers_md[start..]
        .find("<!-- /layers -->")
        .expect("the layer block is closed")
        + start;
    let mut out = BTreeMap::new();
    for line in developers_md[start..end].lines() {
        let mut words = line.split_whitespace();
        let Some(Ok(layer)) = words.next().map(str::parse::<usize>) else {
            continue;
        };
        for name in words {
            assert!(
                out.insert(name.to_string(), layer).is_none(),
                "{name} is on two layers"
            );
        }
    }
    out
}

/// The code of a Rust file without its comments (line comments and block
/// comments; string contents are kept, which can only add imports).
fn strip_comments(src: &str) -> String {
    let mut out = String::with_capacity(src.len());
    let b = src.as_bytes();
    let (mut i, mut in_str) = (0, false);
    while i < b.len() {
        if in_str {
            if b[i] == b'\\' && i + 1 < b.len() {
                out.push_str(&src[i..i + 2]);
                i += 2;
                continue;
            }
            if b[i] == b'"' {
                in_str = false;
            }
        } else if b[i] == b'"' {
            in_str = true;
        } else if src[i..].starts_with("//") {
            i += src[i..].find('\n').unwrap_or(src.len() - i);
            continue;
        } else if src[i..].starts_with("/*") {
            i += src[i..].find("*/").map_or(src.len() - i, |e| e + 2);
            continue;
        }
        let c = src[i..].chars().next().expect("in range");
        out.push(c);
        i += c.len_utf8();
    }
    out
}

/// The modules a file's code names through `crate::`.
fn imports(code: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = code;
    while let Some(at) = rest.find("crate::") {
        let before = rest[..at].chars().next_back();
        rest = &rest[at + "crate::".len()..];
        if before.is_some_and(|c| c.is_alphanumeric() || c == '_') {
            continue; // `mycrate::`, not `crate::`
        }
        if let Some(group) = rest.strip_prefix('{') {
            // the leading name of each item at the group's top level
            let mut depth = 0usize;
            let mut item = String::new();
            for c in group.chars() {
                match c {
                    '{' => depth += 1,
                    '}' if depth == 0 => break,
                    '}' => depth -= 1,
                    ',' if depth == 0 => {
                        out.push(leading_name(&std::mem::take(&mut item)));
                        continue;
                    }
                    _ => {}
                }
                item.push(c);
            }
            out.push(leading_name(&item));
        } else {
            out.push(
                rest.chars()
                    .take_while(|c| c.is_alphanumeric() || *c == '_')
                    .collect(),
            );
        }
    }
    out.retain(|s| !s.is_empty());
    out
}

/// The identifier an import item starts with.
fn leading_name(item: &str) -> String {
    item.trim()
        .chars()
        .take_while(|c| c.is_alphanumeric() || *c == '_')
        .collect()
}

/// Every import of `file` (module `module`) that does not run down the
/// order, as a message naming file, module and layers.
fn violations(
    order: &BTreeMap<String, usize>,
    file: &str,
    module: &str,
    code: &str,
) -> Vec<String> {
    let Some(&own) = order.get(module) else {
        return vec![format!(
            "{file}: module '{module}' is on no layer of DEVELOPERS.md"
        )];
    };
    let mut out = Vec::new();
    for name in imports(&strip_comments(code)) {
        if name == module || name == "self" {
            continue;
        }
        // `crate::Error`, `crate::Result` and the like: the crate root's
        // re-exports, each of a module the order names
        let target = match name.as_str() {
            "Error" | "Result" => "error",
            "Model" => "model",
            n => n,
        };
        match order.get(target) {
            None => out.push(format!(
                "{file}: imports crate::{name}, which is on no layer of DEVELOPERS.md"
            )),
            Some(&l) if l >= own => out.push(format!(
                "{file}: module '{module}' (layer {own}) imports crate::{name} (layer {l}): \
                 imports must run down the order"
            )),
            Some(_) => {}
        }
    }
    out
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).expect("readable folder") {
        let p = entry.expect("folder entry").path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|e| e == "rs") {
            out.push(p);
        }
    }
}

#[test]
fn imports_run_down_the_stated_layer_order() {
    let md = std::fs::read_to_string(repo().join("DEVELOPERS.md")).expect("DEVELOPERS.md");
    let order = layers(&md);
    let src = repo().join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    files.sort();
    let mut problems = Vec::new();
    let mut seen = 0;
    for f in &files {
        let rel = f.strip_prefix(&src).expect("under src");
        let first = rel
            .components()
            .next()
            .expect("a path")
            .as_os_str()
            .to_string_lossy()
            .trim_end_matches(".rs")
            .to_string();
        if first == "lib" {
            continue; // the crate root declares and re-exports every module
        }
        let code = std::fs::read_to_string(f).expect("source file");
        seen += 1;
        problems.extend(violations(
            &order,
            &rel.display().to_string(),
            &first,
            &code,
        ));
    }
    assert!(seen > 50, "only {seen} source files found");
    assert!(problems.is_empty(), "{}", problems.join("\n"));
}

/// The check itself can fail: an import up the order, a name on no layer
/// and an import between modules of one layer are each reported; comments
/// are not imports.
#[test]
fn the_check_reports_an_import_up_the_order() {
    let order = layers("<!-- layers -->\n0 prec units\n1 data\n2 model\n<!-- /layers -->");
    let up = "use crate::model::TargetTransform;\nuse crate::{prec::X, units::{A, B}};";
    assert_eq!(violations(&order, "data/schema.rs", "data", up).len(), 1);
    let down = "use crate::{prec::X, units::{A, B}};\nfn f() { crate::prec::g() }";
    assert!(violations(&order, "data/x.rs", "data", down).is_empty());
    let sibling = "use crate::units::Unit;";
    assert_eq!(violations(&order, "prec.rs", "prec", sibling).len(), 1);
    let unknown = "use crate::nowhere::Thing;";
    assert_eq!(violations(&order, "data/x.rs", "data", unknown).len(), 1);
    let comment = "//! see [`crate::model::Model`]\n/* crate::model */ fn f() {}";
    assert!(violations(&order, "data/x.rs", "data", comment).is_empty());
    assert_eq!(
        imports("use crate::{a::{b, c}, d, e::f as g};"),
        vec!["a", "d", "e"]
    );
}
