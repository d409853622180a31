//! The incident crate's error: always names the file, and where it can the line and column.

use std::fmt;
use std::path::{Path, PathBuf};
use thiserror::Error;

/// What kind of problem an [`IncidentError`] reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum ErrorKind {
    /// The file could not be read (missing, unreadable, not UTF-8).
    Unreadable,
    /// The file is not valid TOML, GeoJSON, GPX or CSV.
    Syntax,
    /// The file parses but a value is wrong or missing.
    Invalid,
}

/// A problem with an input file, reported as `FILE:LINE:COL: what is wrong; how to fix it`.
#[derive(Debug, Clone, Error, PartialEq)]
pub struct IncidentError {
    /// What kind of problem.
    pub kind: ErrorKind,
    /// The file at fault.
    pub file: PathBuf,
    /// Line (from 1), when known.
    pub line: Option<usize>,
    /// Column (from 1), when known.
    pub col: Option<usize>,
    /// What is wrong and how to fix it.
    pub message: String,
}

impl IncidentError {
    /// An error with no position in the file.
    pub fn whole_file(kind: ErrorKind, file: &Path, message: impl Into<String>) -> Self {
        Self {
            kind,
            file: file.to_owned(),
            line: None,
            col: None,
            message: message.into(),
        }
    }

    /// An error at a byte offset of `text`, the contents of `file`.
    pub fn at_offset(
        kind: ErrorKind,
        file: &Path,
        text: &str,
        offset: usize,
        message: impl Into<String>,
    ) -> Self {
        let (line, col) = crate::locate::line_col(text, offset);
        Self {
            kind,
            file: file.to_owned(),
            line: Some(line),
            col: Some(col),
            message: message.into(),
        }
    }
}

impl fmt::Display for IncidentError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file.display())?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(col) = self.col {
                write!(f, ":{col}")?;
            }
        }
        write!(f, ": {}", self.message)
    }
}
