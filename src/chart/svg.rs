//! The data layer drawn over plotters' frame, and the finishing of a
//! drawing into a valid SVG document or an inline fragment.

use super::{hex, Mark, RGBColor};

/// Escape text for XML content and attribute values.
pub(crate) fn xml_escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// A coordinate rounded to 0.1 px, without a trailing ".0".
pub(crate) fn n(v: f64) -> String {
    let r = (v * 10.0).round() / 10.0;
    if r.fract() == 0.0 {
        format!("{}", r as i64)
    } else {
        format!("{r:.1}")
    }
}

/// SVG elements drawn after plotters' frame (on top of it), in pixels.
#[derive(Default)]
pub(crate) struct Layer {
    pub(crate) out: String,
}

impl Layer {
    /// A path with the given attributes (`d` already built).
    pub(crate) fn path(&mut self, d: &str, attrs: &str) {
        if !d.is_empty() {
            self.out.push_str(&format!("<path d=\"{d}\" {attrs}/>\n"));
        }
    }

    /// Polylines through runs of points (a run per inner vector).
    pub(crate) fn polyline(runs: &[Vec<(f64, f64)>]) -> String {
        let mut d = String::new();
        for r in runs.iter().filter(|r| r.len() > 1) {
            for (i, p) in r.iter().enumerate() {
                d.push(if i == 0 { 'M' } else { 'L' });
                d.push_str(&format!("{} {}", n(p.0), n(p.1)));
            }
        }
        d
    }

    /// Text; `anchor` is start, middle or end; `halo` puts a white outline
    /// behind it so it reads over lines and shading.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn text(
        &mut self,
        at: (f64, f64),
        s: &str,
        size: f64,
        anchor: &str,
        colour: RGBColor,
        halo: bool,
        bold: bool,
    ) {
        let halo = if halo {
            " stroke=\"#fff\" stroke-width=\"3\" paint-order=\"stroke\" stroke-linejoin=\"round\""
        } else {
            ""
        };
        let weight = if bold { " font-weight=\"bold\"" } else { "" };
        self.out.push_str(&format!(
            "<text x=\"{}\" y=\"{}\" font-size=\"{}\" text-anchor=\"{anchor}\" fill=\"{}\"{halo}{weight}>{}</text>\n",
            n(at.0),
            n(at.1),
            n(size),
            hex(colour),
            xml_escape(s)
        ));
    }

    /// Marks of one shape at pixel positions, as one path; positions that
    /// fall on the same `grid` px (0.5 or 1) are drawn once. Dots and
    /// squares (zero-length strokes) are sorted and written as relative
    /// moves, the shortest path text for a scatter of many points.
    pub(crate) fn marks(
        &mut self,
        at: &[(f64, f64)],
        mark: Mark,
        colour: RGBColor,
        r: f64,
        grid: f64,
    ) {
        let mut cells: Vec<(i64, i64)> = at
            .iter()
            .filter(|(x, y)| x.is_finite() && y.is_finite())
            .map(|&(x, y)| ((x / grid).round() as i64, (y / grid).round() as i64))
            .collect();
        cells.sort_unstable();
        cells.dedup();
        let mut d = String::new();
        if matches!(mark, Mark::Circle | Mark::Square) {
            let mut last: Option<(i64, i64)> = None;
            for &(i, j) in &cells {
                let (x, y) = (i as f64 * grid, j as f64 * grid);
                match last {
                    None => d.push_str(&format!("M{} {}h0", n(x), n(y))),
                    Some((pi, pj)) => {
                        let (dx, dy) = ((i - pi) as f64 * grid, (j - pj) as f64 * grid);
                        let sep = if dy < 0.0 { "" } else { " " };
                        d.push_str(&format!("m{}{sep}{}h0", n(dx), n(dy)));
                    }
                }
                last = Some((i, j));
            }
        } else {
            for &(i, j) in &cells {
                d.push_str(&mark_path(mark, i as f64 * grid, j as f64 * grid, r));
            }
        }
        self.path(&d, &mark_style(mark, colour, r));
    }
}

/// Plotters' frame made shorter: font sizes and other long decimals
/// rounded to 0.1, attributes that repeat the default (full opacity)
/// dropped.
pub(crate) fn compact(svg: &str) -> String {
    let svg = svg.replace(" opacity=\"1\"", "");
    let mut out = String::with_capacity(svg.len());
    let mut rest = svg.as_str();
    while let Some(a) = rest.find("font-size=\"") {
        let a = a + "font-size=\"".len();
        out.push_str(&rest[..a]);
        let b = rest[a..].find('"').map_or(rest.len(), |b| a + b);
        match rest[a..b].parse::<f64>() {
            Ok(v) => out.push_str(&n(v)),
            Err(_) => out.push_str(&rest[a..b]),
        }
        rest = &rest[b..];
    }
    out.push_str(rest);
    out
}

/// Path data of one mark centred at (x, y).
pub(crate) fn mark_path(mark: Mark, x: f64, y: f64, r: f64) -> String {
    match mark {
        // a zero-length stroke with round (square) caps draws a dot (square)
        Mark::Circle | Mark::Square => format!("M{} {}h0", n(x), n(y)),
        Mark::Triangle => format!(
            "M{} {}l{} {}h{}z",
            n(x),
            n(y - r),
            n(0.87 * r * 1.2),
            n(1.5 * r * 1.2),
            n(-1.74 * r * 1.2)
        ),
        Mark::Cross => format!(
            "M{} {}l{} {}m0 {}l{} {}",
            n(x - r),
            n(y - r),
            n(2.0 * r),
            n(2.0 * r),
            n(-2.0 * r),
            n(-2.0 * r),
            n(2.0 * r)
        ),
        Mark::Diamond => format!(
            "M{} {}l{} {}l{} {}l{} {}z",
            n(x),
            n(y - r),
            n(r),
            n(r),
            n(-r),
            n(r),
            n(-r),
            n(-r)
        ),
    }
}

/// Stroke and fill of a mark's path.
pub(crate) fn mark_style(mark: Mark, colour: RGBColor, r: f64) -> String {
    let c = hex(colour);
    match mark {
        Mark::Circle => format!(
            "fill=\"none\" stroke=\"{c}\" stroke-opacity=\"0.75\" stroke-width=\"{}\" stroke-linecap=\"round\"",
            n(2.0 * r)
        ),
        Mark::Square => format!(
            "fill=\"none\" stroke=\"{c}\" stroke-opacity=\"0.75\" stroke-width=\"{}\" stroke-linecap=\"square\"",
            n(1.7 * r)
        ),
        Mark::Triangle | Mark::Diamond => {
            format!("fill=\"#fff\" fill-opacity=\"0.6\" stroke=\"{c}\" stroke-width=\"1.4\"")
        }
        Mark::Cross => format!("fill=\"none\" stroke=\"{c}\" stroke-width=\"1.8\""),
    }
}

/// Insert `layer` before the closing tag of plotters' drawing.
pub(crate) fn with_layer(svg: String, layer: &Layer) -> String {
    let mut svg = compact(&svg);
    if let Some(at) = svg.rfind("</svg>") {
        svg.insert_str(at, &layer.out);
    }
    svg
}

/// The family on a standalone document's root, inherited by its text.
const ROOT_FONT: &str = " font-family=\"sans-serif\"";

/// A drawing made a standalone SVG document: the XML declaration, the SVG
/// namespace and a viewBox on the root (plotters writes both; they are
/// added when missing), the family `sans-serif` for text that names none,
/// and a `<title>` as its first child, which viewers show as the chart's
/// name.
pub fn standalone(svg: &str, title: &str) -> String {
    let body = svg.trim_start_matches(|c: char| c != '<');
    let body = body
        .strip_prefix("<?xml version=\"1.0\" encoding=\"UTF-8\"?>")
        .unwrap_or(body)
        .trim_start();
    let Some(end) = body.find('>') else {
        return body.to_string();
    };
    let mut open = body[..end].trim_end_matches('/').to_string();
    if !open.contains("xmlns=") {
        open.push_str(" xmlns=\"http://www.w3.org/2000/svg\"");
    }
    // text drawn without a family of its own (contour labels, notes)
    // inherits this one; without it a viewer's default is often a serif
    if !open.contains("font-family=") {
        open.push_str(ROOT_FONT);
    }
    if !open.contains("viewBox") {
        let attr = |name: &str| {
            open.split(&format!(" {name}=\""))
                .nth(1)
                .and_then(|r| r.split('"').next())
                .map(str::to_string)
        };
        if let (Some(w), Some(h)) = (attr("width"), attr("height")) {
            open.push_str(&format!(" viewBox=\"0 0 {w} {h}\""));
        }
    }
    format!(
        "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n{open} role=\"img\">\n<title>{}</title>\n{}",
        xml_escape(title),
        &body[end + 1..].trim_start_matches('\n')
    )
}

/// A standalone document ([`standalone`]) made a fragment for an HTML
/// page: no XML declaration, no namespace attribute (HTML gives an inline
/// `<svg>` its namespace), no family (the page's applies); the `<title>`
/// stays.
pub fn inline(doc: &str) -> String {
    doc.trim_start_matches("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n")
        .replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1)
        .replacen(ROOT_FONT, "", 1)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn standalone_adds_namespace_viewbox_and_title() {
        let s = standalone(
            "<svg width=\"10\" height=\"20\">\n<rect/>\n</svg>\n",
            "a < b",
        );
        assert!(s.starts_with("<?xml"));
        assert!(s.contains("xmlns=\"http://www.w3.org/2000/svg\""));
        assert!(s.contains("viewBox=\"0 0 10 20\""));
        assert!(s.contains("<title>a &lt; b</title>"));
        assert!(s.contains("font-family=\"sans-serif\""));
        let i = inline(&standalone(
            "<svg width=\"10\" height=\"20\">\n</svg>\n",
            "t",
        ));
        assert!(i.starts_with("<svg") && !i.contains("xmlns") && i.contains("<title>t</title>"));
        assert!(!i.contains("font-family"));
    }

    #[test]
    fn coordinates_round_to_a_tenth() {
        assert_eq!(n(12.34), "12.3");
        assert_eq!(n(12.96), "13");
        assert_eq!(n(-0.04), "0");
    }
}
