//! The page, embedded in the binary: HTML, style and script of mettle's
//! own, put together once at start. Nothing is loaded from elsewhere.

const HTML: &str = include_str!("page/index.html");
const CSS: &str = include_str!("page/page.css");
const JS: &str = include_str!("page/page.js");

/// The whole page with its style and script inline.
pub fn html() -> String {
    HTML.replace("/*STYLE*/", CSS)
        .replace("/*SCRIPT*/", JS)
        .replace("{{CAUTION}}", mettle::predict::CAUTION)
}
