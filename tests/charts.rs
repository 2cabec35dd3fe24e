//! Every SVG the commands write is a valid SVG document on its own (parsed
//! by quick-xml: the SVG namespace on the root, a viewBox, a `<title>`,
//! text as `<text>`), and the charts show what they are for: the transition
//! chart only the energy target with its crossings and the requirement, a
//! map one labelled panel per target with its error-bar scale.
//!
//! The SVG namespace is the W3C's (SVG 1.1, §5.1, "http://www.w3.org/2000/svg").
//!
//! With `--png` each command also writes the chart as PNG beside the SVG.
//! The file is checked against the PNG specification (W3C, Portable
//! Network Graphics Specification, 2nd ed., 2003: §5.2 the eight-byte
//! signature, §11.2.2 IHDR as the first chunk with width and height as
//! four-byte big-endian integers), decoded, and compared with the same
//! SVG rendered without its `<text>` elements: the pixels that differ are
//! the text, so a PNG drawn without a font fails.

mod common;

use std::path::PathBuf;

use common::{stderr, Workdir};
use quick_xml::events::Event;

const SVG_NS: &str = "http://www.w3.org/2000/svg";

/// What a parsed SVG document holds.
#[derive(Debug, Default)]
struct Doc {
    root_ns: Option<String>,
    view_box: bool,
    title: String,
    texts: Vec<String>,
    elements: Vec<String>,
}

/// Parse `text` as XML; panics naming `what` on a syntax error.
fn parse_svg(text: &str, what: &str) -> Doc {
    let mut r = quick_xml::Reader::from_str(text);
    let mut d = Doc::default();
    let (mut depth, mut in_title, mut in_text) = (0usize, false, false);
    loop {
        match r.read_event() {
            Ok(Event::Start(e)) => {
                let name = String::from_utf8_lossy(e.name().as_ref()).to_string();
                if depth == 0 {
                    assert_eq!(name, "svg", "{what}: root element");
                    for a in e.attributes().flatten() {
                        match a.key.as_ref() {
                            b"xmlns" => d.root_ns = Some(String::from_utf8_lossy(&a.value).into()),
                            b"viewBox" => d.view_box = true,
                            _ => {}
                        }
                    }
                }
                in_title = name == "title" && depth == 1;
                in_text = name == "text";
                d.elements.push(name);
                depth += 1;
            }
            Ok(Event::Empty(e)) => {
                d.elements
                    .push(String::from_utf8_lossy(e.name().as_ref()).to_string());
            }
            Ok(Event::End(_)) => {
                depth -= 1;
                in_title = false;
                in_text = false;
            }
            Ok(Event::Text(t)) => {
                let s = t.decode().expect("text").trim().to_string();
                if in_title {
                    d.title.push_str(&s);
                } else if in_text {
                    d.texts.push(s);
                }
            }
            Ok(Event::Eof) => break,
            Err(e) => panic!(
                "{what}: not well-formed XML at {}: {e}",
                r.buffer_position()
            ),
            Ok(_) => {}
        }
    }
    assert_eq!(depth, 0, "{what}: unclosed elements");
    d
}

/// The checks every standalone SVG passes.
fn valid(w: &Workdir, name: &str) -> Doc {
    let text = String::from_utf8(w.read(name)).expect("UTF-8 SVG");
    let d = parse_svg(&text, name);
    assert_eq!(
        d.root_ns.as_deref(),
        Some(SVG_NS),
        "{name}: SVG namespace on the root"
    );
    assert!(d.view_box, "{name}: no viewBox");
    assert!(!d.title.trim().is_empty(), "{name}: no <title>");
    assert!(d.texts.len() >= 4, "{name}: text not drawn as <text>");
    for bad in ["image", "use", "script", "foreignObject"] {
        assert!(!d.elements.iter().any(|e| e == bad), "{name}: <{bad}>");
    }
    assert!(
        !text.contains("href"),
        "{name}: refers to something outside"
    );
    d
}

/// The value of attribute `name` on the root `<svg>` of `text`.
fn root_attr(text: &str, name: &str) -> f64 {
    let root = &text[text.find("<svg").expect("an <svg> root")..];
    let root = &root[..root.find('>').expect("closed tag")];
    let v = root
        .split(&format!(" {name}=\""))
        .nth(1)
        .and_then(|r| r.split('"').next())
        .unwrap_or_else(|| panic!("no {name} on the root"));
    v.trim_end_matches("px").parse().expect("a number")
}

/// `svg` without its `<text>` elements.
fn without_text(svg: &str) -> String {
    let mut out = String::with_capacity(svg.len());
    let mut rest = svg;
    while let Some(a) = rest.find("<text") {
        out.push_str(&rest[..a]);
        let b = rest[a..].find("</text>").expect("closed <text>") + a;
        rest = &rest[b + "</text>".len()..];
    }
    out.push_str(rest);
    out
}

/// The checks every PNG beside an SVG passes (see the module comment):
/// signature, IHDR first with twice the SVG's size, decodable, not blank,
/// and text drawn. Returns the number of text pixels.
fn valid_png(w: &Workdir, png_name: &str, svg_name: &str) -> usize {
    let png = w.read(png_name);
    let svg = String::from_utf8(w.read(svg_name)).expect("UTF-8 SVG");
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n", "{png_name}: PNG signature");
    assert_eq!(&png[12..16], b"IHDR", "{png_name}: IHDR first");
    let be = |i: usize| u32::from_be_bytes([png[i], png[i + 1], png[i + 2], png[i + 3]]);
    let (width, height) = (be(16), be(20));
    assert_eq!(
        (width, height),
        (
            (2.0 * root_attr(&svg, "width")).round() as u32,
            (2.0 * root_attr(&svg, "height")).round() as u32
        ),
        "{png_name}: twice the SVG's size"
    );
    let image = resvg::tiny_skia::Pixmap::decode_png(&png).expect("a decodable PNG");
    assert_eq!((image.width(), image.height()), (width, height));
    let pixels = image.pixels();
    let inked = pixels
        .iter()
        .filter(|p| (p.red(), p.green(), p.blue()) != (255, 255, 255))
        .count();
    assert!(
        inked > pixels.len() / 100,
        "{png_name}: {inked} of {} pixels drawn",
        pixels.len()
    );
    let bare = mettle::chart::png(&without_text(&svg), mettle::chart::PNG_SCALE)
        .expect("the SVG without text renders");
    let bare = resvg::tiny_skia::Pixmap::decode_png(&bare).expect("decodable");
    let text_pixels = pixels
        .iter()
        .zip(bare.pixels())
        .filter(|(a, b)| a != b)
        .count();
    // a single 12 px label of a few letters covers some hundred pixels at
    // twice the size; every chart has its title and axis labels at least
    assert!(
        text_pixels > 2_000,
        "{png_name}: only {text_pixels} pixels of text"
    );
    text_pixels
}

fn repo(p: &str) -> String {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join(p)
        .to_str()
        .expect("UTF-8 path")
        .to_string()
}

#[test]
fn every_svg_the_commands_write_is_a_valid_document() {
    let w = Workdir::new();
    let (model, base) = (
        repo("models/fellhaven_welds.json"),
        repo("datasets/fellhaven_new_welds.csv"),
    );
    // a curve of every target
    w.ok(&[
        "sweep",
        "--model",
        &model,
        "--vary",
        "ni_wt=0:3.5:15",
        "--base",
        &base,
        "--plot",
        "ni.svg",
        "--png",
        "--out",
        "ni.csv",
    ]);
    let d = valid(&w, "ni.svg");
    valid_png(&w, "ni.png", "ni.svg");
    for t in ["uts_mpa", "charpy_j"] {
        assert!(
            d.texts.iter().any(|s| s.starts_with(t) && s.contains('(')),
            "{t} axis with unit: {:?}",
            d.texts
        );
    }
    assert!(
        d.texts.iter().any(|s| s == "ni_wt (wt%)"),
        "x axis unit: {:?}",
        d.texts
    );
    // a map: one panel per target, labelled contours, an error-bar scale
    let out = w.ok(&[
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
        "--png",
        "--out",
        "map.csv",
    ]);
    assert!(stderr(&out).contains("map.svg"));
    let d = valid(&w, "map.svg");
    assert!(stderr(&out).contains("map.png"));
    valid_png(&w, "map.png", "map.svg");
    let model_json: serde_json::Value =
        serde_json::from_slice(&std::fs::read(&model).expect("model")).expect("json");
    let targets: Vec<String> = model_json["targets"]
        .as_array()
        .expect("targets")
        .iter()
        .map(|t| t["name"].as_str().expect("name").to_string())
        .collect();
    for t in &targets {
        assert!(
            d.texts
                .iter()
                .any(|s| s.starts_with(&format!("{t} over ni_wt"))),
            "no panel for {t}: {:?}",
            d.texts
        );
    }
    let scales = d
        .texts
        .iter()
        .filter(|s| s.starts_with("error bar: sd"))
        .count();
    assert_eq!(scales, targets.len(), "one error-bar scale per panel");
    // one target only with --target
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
        "map1.svg",
        "--target",
        "charpy_j",
        "--out",
        "map1.csv",
    ]);
    let d = valid(&w, "map1.svg");
    assert_eq!(
        d.texts
            .iter()
            .filter(|s| s.starts_with("error bar: sd"))
            .count(),
        1
    );
    assert!(!d.texts.iter().any(|s| s.starts_with("uts_mpa")));
    // the transition chart: the energy target only, crossings, requirement
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
        "kv.svg",
        "--png",
    ]);
    let d = valid(&w, "kv.svg");
    valid_png(&w, "kv.png", "kv.svg");
    assert!(
        d.texts.iter().any(|s| s.starts_with("T27J")),
        "{:?}",
        d.texts
    );
    assert!(
        d.texts
            .iter()
            .any(|s| s.starts_with("T47J") || s.starts_with("47 J")),
        "{:?}",
        d.texts
    );
    assert!(d.texts.iter().any(|s| s.contains("P = ")), "{:?}", d.texts);
    assert!(
        d.texts.iter().any(|s| s.contains("(°C)")) && d.texts.iter().any(|s| s.contains("(J)"))
    );
    assert!(
        !d.texts
            .iter()
            .any(|s| s.contains("uts_mpa") || s.contains("yield")),
        "other targets drawn"
    );
    // the design front
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
        "front.svg",
        "--png",
    ]);
    let d = valid(&w, "front.svg");
    valid_png(&w, "front.png", "front.svg");
    assert!(
        d.texts.join(" ").contains("licensed engineers"),
        "caution on the chart"
    );
}

/// The report of the bundled four-target, 16-input model with its 840
/// training rows and 8 held-out rows stays under 1 MB (the bound
/// for three targets × 16 inputs), each chart an inline `<svg>` with its
/// `<title>`.
#[test]
fn the_report_of_a_four_target_model_is_under_a_megabyte() {
    let w = Workdir::new();
    w.ok(&[
        "report",
        "--model",
        &repo("models/fellhaven_welds.json"),
        "--training-data",
        &repo("datasets/fellhaven_welds.csv"),
        "--data",
        &repo("datasets/fellhaven_new_welds_truth.csv"),
        "--out",
        "report.html",
    ]);
    let html = String::from_utf8(w.read("report.html")).expect("UTF-8");
    println!("report: {} bytes", html.len());
    assert!(html.len() < 1_000_000, "{} bytes", html.len());
    let svgs = html.matches("<svg").count();
    assert!(svgs >= 4 * 16, "{svgs} charts");
    assert_eq!(
        html.matches("<title>").count(),
        svgs + 1,
        "a <title> per chart and the page's"
    );
}
