//! A chart written as SVG and, on request, as PNG beside it.

use std::path::{Path, PathBuf};

use mettle::chart::{png, PNG_SCALE};
use mettle::data::write_atomic;

/// Where the PNG of the chart at `svg_path` goes: the same name with the
/// extension `.png` (`kv.svg` → `kv.png`).
pub fn png_path(svg_path: &Path) -> PathBuf {
    svg_path.with_extension("png")
}

/// Write `svg` to `path`; with `with_png` also the chart rendered as PNG
/// (twice the SVG's pixel size) beside it. Returns the files written.
pub fn write_chart(path: &Path, svg: &str, with_png: bool) -> anyhow::Result<Vec<PathBuf>> {
    write_atomic(path, svg.as_bytes())?;
    let mut written = vec![path.to_path_buf()];
    if with_png {
        let p = png_path(path);
        write_atomic(&p, &png(svg, PNG_SCALE)?)?;
        written.push(p);
    }
    Ok(written)
}
