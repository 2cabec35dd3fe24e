//! A chart's SVG rendered to PNG, for slides and documents that take no
//! SVG: resvg parses the same document a browser would get (usvg), lays
//! its text out with the machine's fonts (fontdb) and rasterises it
//! (tiny-skia) onto a white page.
//!
//! The charts name only the generic family `sans-serif` (text without a
//! family inherits it from the root), so the PNG's text needs one sans
//! face on the machine. The first of [`SANS_FACES`] that is installed is
//! used; with none of them, any installed face; with no font at all the
//! rendering fails rather than writing a chart without its labels (on
//! Debian `apt-get install fonts-dejavu-core`, which `make deps` does).

use std::sync::{Arc, OnceLock};

use resvg::tiny_skia::{Color, Pixmap, Transform};
use resvg::usvg::{self, fontdb};

use crate::error::{Error, Result};

/// Sans faces tried in order for the generic families, the first widely
/// installed with Linux distributions (DejaVu, Liberation, Noto) and the
/// others their counterparts elsewhere.
pub const SANS_FACES: [&str; 6] = [
    "DejaVu Sans",
    "Liberation Sans",
    "Noto Sans",
    "Arial",
    "Helvetica",
    "FreeSans",
];

/// Pixels per SVG pixel of [`png`] when the caller has no preference:
/// twice the SVG's size, sharp on a slide or a high-density screen.
pub const PNG_SCALE: f32 = 2.0;

/// The machine's fonts, loaded once per process (a scan of the system
/// font folders), with every generic family pointed at one sans face;
/// `None` when the machine has no font.
fn fonts() -> Option<Arc<fontdb::Database>> {
    static FONTS: OnceLock<Option<Arc<fontdb::Database>>> = OnceLock::new();
    FONTS
        .get_or_init(|| {
            let mut db = fontdb::Database::new();
            db.load_system_fonts();
            let has = |name: &str| {
                db.faces()
                    .any(|f| f.families.iter().any(|(n, _)| n == name))
            };
            let family = SANS_FACES
                .iter()
                .find(|n| has(n))
                .map(|n| (*n).to_string())
                .or_else(|| {
                    db.faces()
                        .next()
                        .and_then(|f| f.families.first().map(|(n, _)| n.clone()))
                })?;
            db.set_sans_serif_family(family.clone());
            db.set_serif_family(family.clone());
            db.set_monospace_family(family.clone());
            db.set_cursive_family(family.clone());
            db.set_fantasy_family(family);
            Some(Arc::new(db))
        })
        .clone()
}

/// The name of the face that [`png`] draws text with, or `None` when the
/// machine has no font.
pub fn png_font() -> Option<String> {
    fonts().map(|db| db.family_name(&fontdb::Family::SansSerif).to_string())
}

/// Render a standalone SVG document ([`super::standalone`]) to PNG bytes,
/// `scale` device pixels per SVG pixel, on a white background.
///
/// # Errors
/// [`Error::InvalidParameter`] for a scale that is not a positive
/// number; [`Error::Plot`] when the machine has no font to draw text with, when
/// the document does not parse as SVG or has no size, or when the image
/// would be empty or too large to allocate.
pub fn png(svg: &str, scale: f32) -> Result<Vec<u8>> {
    let plot = |message: String| Error::Plot { message };
    if !(scale.is_finite() && scale > 0.0) {
        return Err(Error::InvalidParameter {
            name: "scale",
            value: scale.to_string(),
            expected: "a positive number of pixels per SVG pixel".into(),
        });
    }
    let db = fonts().ok_or_else(|| {
        plot(
            "no font found for the PNG's text; install one (Debian: apt-get install \
             fonts-dejavu-core)"
                .into(),
        )
    })?;
    let options = usvg::Options {
        font_family: "sans-serif".into(),
        fontdb: db,
        ..usvg::Options::default()
    };
    let tree = usvg::Tree::from_str(svg, &options)
        .map_err(|e| plot(format!("the chart's SVG does not parse for PNG: {e}")))?;
    let size = tree.size().to_int_size().scale_by(scale).ok_or_else(|| {
        plot(format!(
            "a PNG of {} × {} px at scale {scale} is empty",
            tree.size().width(),
            tree.size().height()
        ))
    })?;
    let mut pixmap = Pixmap::new(size.width(), size.height()).ok_or_else(|| {
        plot(format!(
            "a PNG of {} × {} px cannot be allocated",
            size.width(),
            size.height()
        ))
    })?;
    pixmap.fill(Color::WHITE);
    resvg::render(
        &tree,
        Transform::from_scale(scale, scale),
        &mut pixmap.as_mut(),
    );
    pixmap
        .encode_png()
        .map_err(|e| plot(format!("encoding the PNG failed: {e}")))
}

#[cfg(test)]
mod tests {
    use super::*;

    const DOC: &str = "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"60\" height=\"20\" \
                       viewBox=\"0 0 60 20\"><text x=\"2\" y=\"15\" font-size=\"14\">Ab9</text></svg>";

    /// Non-white pixels of a PNG made by [`png`].
    fn inked(bytes: &[u8]) -> usize {
        let p = Pixmap::decode_png(bytes).expect("decodable");
        p.pixels()
            .iter()
            .filter(|c| (c.red(), c.green(), c.blue()) != (255, 255, 255))
            .count()
    }

    #[test]
    fn text_is_drawn_at_the_asked_scale() {
        let bytes = png(DOC, 2.0).expect("renders");
        let p = Pixmap::decode_png(&bytes).expect("decodable");
        assert_eq!((p.width(), p.height()), (120, 40));
        // three 14 px glyphs at twice the size cover far more than 50 px;
        // with no font the text would be skipped and nothing drawn
        assert!(inked(&bytes) > 50, "{} pixels of text", inked(&bytes));
        assert_eq!(
            inked(&png(&DOC.replace("Ab9", ""), 2.0).expect("renders")),
            0
        );
    }

    #[test]
    fn a_bad_scale_or_document_is_an_error() {
        assert!(matches!(
            png(DOC, 0.0),
            Err(Error::InvalidParameter { name: "scale", .. })
        ));
        assert!(matches!(png("<svg", 1.0), Err(Error::Plot { .. })));
    }
}
