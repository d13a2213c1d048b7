//! Stage 3: one results type per command and its renderers (the breakdown checks, shared
//! by `solve` and `check`, in [`checks`]) — terminal text, JSON, CSV and
//! VTU in each command's module, the pictures of the part in [`picture`], and [`write`](mod@write), through which
//! every file is written whole or not at all.

pub mod check;
pub mod checks;
pub mod mesh;
pub mod picture;
pub mod report;
pub mod solve;
pub mod write;

/// HTML- and XML-escapes text (the report and the SVG pictures).
pub(crate) fn esc(s: &str) -> String {
    s.replace('&', "&amp;").replace('<', "&lt;").replace('>', "&gt;").replace('"', "&quot;")
}
