//! The report and each kind of chart opened in a real browser: headless
//! Chromium (Debian's `chromium` package; `make test` installs it with
//! apt-get). For each file the browser takes a screenshot and dumps the
//! DOM it built: the screenshot must not be blank and must show coloured
//! data marks, and the DOM must be the SVG drawing itself (a browser that
//! cannot read an SVG document as SVG, as when the namespace is missing,
//! shows the XML source instead, which the control case below checks is
//! caught). The browser's network log must name no request to a host the
//! browser does not also contact for a blank page (Chromium checks its
//! clock, updates and accounts whatever the flags): the report and the
//! charts load nothing from outside (a second control case, a page with a
//! remote image, checks such a request is seen).
//!
//! How it starts: `chromium --headless` with a fresh profile directory per
//! run and background networking, component updates, sync and first-run
//! pages switched off; two runs per file (screenshot, DOM). The time of
//! each run is printed (about 1–3 s each on the 2-core development machine).
//! `METTLE_SHOTS=DIR` keeps the screenshots in DIR to look at.

mod common;

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Instant;

use common::Workdir;

fn chromium() -> PathBuf {
    let path = std::env::var_os("PATH").unwrap_or_default();
    for dir in std::env::split_paths(&path) {
        for name in ["chromium", "chromium-browser"] {
            let p = dir.join(name);
            if p.is_file() {
                return p;
            }
        }
    }
    panic!("chromium not found on PATH: `make test` installs Debian's chromium (apt-get install chromium)");
}

/// What the browser made of one file.
struct Seen {
    dom: String,
    shot: Vec<u8>,
    urls: Vec<String>,
}

fn run_browser(w: &Workdir, file: &Path, tag: &str, action: &str) -> (String, Vec<String>) {
    let profile = w.path(&format!(
        "profile-{tag}-{}",
        action
            .trim_start_matches("--")
            .split('=')
            .next()
            .unwrap_or("x")
    ));
    let netlog = w.path(&format!("netlog-{tag}.json"));
    let start = Instant::now();
    let out = Command::new(chromium())
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--disable-default-apps",
            "--disable-extensions",
            "--no-first-run",
            "--no-default-browser-check",
            "--hide-scrollbars",
            "--window-size=1000,1500",
            &format!("--user-data-dir={}", profile.display()),
            &format!("--log-net-log={}", netlog.display()),
            action,
            &format!("file://{}", file.display()),
        ])
        .output()
        .expect("chromium runs");
    println!(
        "chromium {action} {}: {:.1} s",
        file.file_name().and_then(|n| n.to_str()).unwrap_or(""),
        start.elapsed().as_secs_f64()
    );
    assert!(
        out.status.success(),
        "chromium failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let log = std::fs::read_to_string(&netlog).unwrap_or_default();
    // every "url":"…" the network log records
    let urls = log
        .split("\"url\":\"")
        .skip(1)
        .filter_map(|s| s.split('"').next())
        .map(str::to_string)
        .collect();
    (String::from_utf8_lossy(&out.stdout).to_string(), urls)
}

fn open(w: &Workdir, file: &Path, tag: &str) -> Seen {
    let shot_path = w.path(&format!("{tag}.png"));
    let (_, mut urls) = run_browser(
        w,
        file,
        tag,
        &format!("--screenshot={}", shot_path.display()),
    );
    let (dom, more) = run_browser(w, file, tag, "--dump-dom");
    urls.extend(more);
    let shot = std::fs::read(&shot_path).expect("screenshot written");
    if let Some(dir) = std::env::var_os("METTLE_SHOTS") {
        let _ = std::fs::create_dir_all(&dir);
        let _ = std::fs::write(Path::new(&dir).join(format!("{tag}.png")), &shot);
    }
    Seen { dom, shot, urls }
}

/// The host of a URL ("" for file:, data: and about: URLs).
fn host(url: &str) -> &str {
    url.split_once("://")
        .map_or("", |(_, rest)| rest.split('/').next().unwrap_or(""))
}

/// Requests to hosts the browser does not contact on its own for a blank
/// page (its clock, update and account checks, which no flag switches off
/// entirely): those a file makes.
fn made_by_page<'a>(urls: &'a [String], own: &[String]) -> Vec<&'a String> {
    urls.iter()
        .filter(|u| !(u.starts_with("file:") || u.starts_with("data:") || u.starts_with("about:")))
        .filter(|u| !own.iter().any(|o| host(o) == host(u)))
        .collect()
}

fn repo(p: &str) -> String {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join(p)
        .to_str()
        .expect("UTF-8")
        .to_string()
}

#[test]
fn report_and_charts_render_in_chromium_and_load_nothing() {
    let w = Workdir::new();
    let (model, base) = (
        repo("models/fellhaven_welds.json"),
        repo("datasets/fellhaven_new_welds.csv"),
    );
    w.ok(&[
        "report",
        "--model",
        &model,
        "--training-data",
        &repo("datasets/fellhaven_welds.csv"),
        "--data",
        &repo("datasets/fellhaven_new_welds_truth.csv"),
        "--out",
        "report.html",
    ]);
    w.ok(&[
        "sweep",
        "--model",
        &model,
        "--vary",
        "ni_wt=0:3.5:15",
        "--base",
        &base,
        "--plot",
        "curve.svg",
        "--out",
        "c.csv",
    ]);
    w.ok(&[
        "sweep",
        "--model",
        &model,
        "--vary",
        "ni_wt=0.5:3.0:11",
        "--vary",
        "heat_input_kj_mm=1.0:3.4:9",
        "--base",
        &base,
        "--plot",
        "map.svg",
        "--out",
        "m.csv",
    ]);
    w.ok(&[
        "transition",
        "--model",
        &model,
        "--temperature-input",
        "test_temp_c",
        "--target",
        "charpy_j",
        "--base",
        &base,
        "--set",
        "ni_wt=0.3",
        "--set",
        "heat_input_kj_mm=2.8",
        "--from",
        "-80",
        "--to",
        "20",
        "--energy",
        "27,47",
        "--require",
        "47@-40",
        "--samples",
        "500",
        "--plot",
        "transition.svg",
    ]);
    w.ok(&[
        "design",
        "--model",
        &model,
        "--base",
        &base,
        "--require",
        "uts_mpa>=620",
        "--costs",
        &repo("datasets/fellhaven_costs.toml"),
        "--vary",
        "ni_wt=0.2:3.4",
        "--vary",
        "mn_wt=0.9:1.7",
        "--count",
        "3",
        "--svg",
        "design.svg",
    ]);
    w.write("blank.html", "<!DOCTYPE html><title>blank</title>");
    let blank_seen = open(&w, &w.path("blank.html"), "blank");
    let (blank, own) = (blank_seen.shot.len(), blank_seen.urls);
    let mut hosts: Vec<&str> = own.iter().map(|u| host(u)).collect();
    hosts.sort_unstable();
    hosts.dedup();
    println!("hosts the browser contacts on its own: {hosts:?}");
    println!("blank page screenshot: {blank} bytes");
    for name in ["curve.svg", "map.svg", "transition.svg", "design.svg"] {
        let seen = open(&w, &w.path(name), name.trim_end_matches(".svg"));
        println!("{name}: screenshot {} bytes", seen.shot.len());
        assert!(seen.shot.len() > 4 * blank, "{name}: blank screenshot");
        let root = seen.dom.trim_start().trim_start_matches(|c| c != '<');
        assert!(
            root.starts_with("<svg"),
            "{name}: the browser did not read it as SVG: {}",
            &root[..root.len().min(200)]
        );
        assert!(
            made_by_page(&seen.urls, &own).is_empty(),
            "{name}: network requests {:?}",
            made_by_page(&seen.urls, &own)
        );
    }
    let seen = open(&w, &w.path("report.html"), "report");
    println!("report: screenshot {} bytes", seen.shot.len());
    assert!(seen.shot.len() > 4 * blank, "report's first screen blank");
    let figures = seen.dom.matches("<figure").count();
    let svgs = seen.dom.matches("<svg").count();
    assert!(
        figures >= 10 && svgs >= figures,
        "{figures} figures, {svgs} svg elements in the DOM"
    );
    assert!(
        made_by_page(&seen.urls, &own).is_empty(),
        "report: network requests {:?}",
        made_by_page(&seen.urls, &own)
    );

    // control cases: an SVG without its namespace is shown as XML source,
    // and a page with a remote image makes a request the log shows
    let svg = std::fs::read_to_string(w.path("design.svg")).expect("svg");
    w.write(
        "bare.svg",
        svg.replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1),
    );
    let bare = open(&w, &w.path("bare.svg"), "bare");
    assert!(
        !bare.dom.trim_start().starts_with("<svg"),
        "XML source view not told apart"
    );
    w.write(
        "remote.html",
        "<!DOCTYPE html><p>x</p><img src=\"http://127.0.0.1:9/x.png\">",
    );
    let remote = open(&w, &w.path("remote.html"), "remote");
    assert!(
        !made_by_page(&remote.urls, &own).is_empty(),
        "a remote request was not seen in the network log"
    );
}
