//! Model-file diagnostics: what is wrong, where (file:line:column, with a marker under the
//! offending text) and what to change.

use std::fmt;
use std::ops::Range;
use std::path::{Path, PathBuf};

/// An error in a model file, pointing at the text that causes it.
#[derive(Clone, Debug)]
pub struct ModelError {
    /// The model file.
    pub path: PathBuf,
    /// The whole file text (for the excerpt).
    pub source: String,
    /// Byte range of the offending text, if known.
    pub span: Option<Range<usize>>,
    /// The dotted key the error is about (e.g. `shape[2].material`), if known.
    pub key: Option<String>,
    /// What is wrong.
    pub message: String,
    /// What to change.
    pub help: Option<String>,
}

impl ModelError {
    /// An error at `span` of `source`.
    pub fn new(path: &Path, source: &str, span: Option<Range<usize>>, message: impl Into<String>) -> Self {
        ModelError {
            path: path.to_path_buf(),
            source: source.to_string(),
            span,
            key: None,
            message: message.into(),
            help: None,
        }
    }

    /// Adds the key.
    pub fn key(mut self, key: impl Into<String>) -> Self {
        self.key = Some(key.into());
        self
    }

    /// Adds advice.
    pub fn help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }

    /// 1-based line and column of a byte offset.
    pub fn line_col(&self, offset: usize) -> (usize, usize) {
        let offset = offset.min(self.source.len());
        let before = &self.source[..offset];
        let line = before.matches('\n').count() + 1;
        let col = before.rsplit('\n').next().map(|s| s.chars().count()).unwrap_or(0) + 1;
        (line, col)
    }
}

impl fmt::Display for ModelError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        writeln!(f, "error: {}", self.message)?;
        match &self.span {
            Some(span) => {
                let (line, col) = self.line_col(span.start);
                writeln!(f, "  --> {}:{}:{}", self.path.display(), line, col)?;
                let text = self.source.lines().nth(line - 1).unwrap_or("");
                let width = line.to_string().len();
                writeln!(f, "{:width$} |", "")?;
                writeln!(f, "{line} | {text}")?;
                let line_len = text.chars().count();
                let span_chars = self.source.get(span.clone()).map(|s| s.chars().count()).unwrap_or(1);
                let n = span_chars.clamp(1, line_len.saturating_sub(col - 1).max(1));
                write!(f, "{:width$} | {}{}", "", " ".repeat(col - 1), "^".repeat(n))?;
                if let Some(k) = &self.key {
                    write!(f, " {k}")?;
                }
                writeln!(f)?;
            }
            None => {
                write!(f, "  --> {}", self.path.display())?;
                if let Some(k) = &self.key {
                    write!(f, " (key {k})")?;
                }
                writeln!(f)?;
            }
        }
        if let Some(h) = &self.help {
            writeln!(f, "  = help: {h}")?;
        }
        Ok(())
    }
}

impl std::error::Error for ModelError {}
