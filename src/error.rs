//! The library's error types. Problems with one input file are data (`ingest::Problem`);
//! these are the errors that stop a run before anything is written: a bad rubric, mapping
//! or option (exit code 2), and failures to write the outputs.

use std::path::PathBuf;

use thiserror::Error;

/// A rubric, mapping or option that cannot be used. Nothing is written.
#[derive(Debug, Error, PartialEq)]
pub enum ConfigError {
    /// A configuration file that does not parse, located to line and column.
    #[error("{file}:{line}:{column}: {message}")]
    File {
        file: String,
        line: usize,
        column: usize,
        message: String,
    },
    #[error("{0}")]
    Invalid(String),
    /// Several problems in one file, each located.
    #[error("{}", located_lines(file, errors))]
    Located { file: String, errors: Vec<Located> },
}

/// One located problem in a configuration file.
#[derive(Debug, Clone, PartialEq)]
pub struct Located {
    pub line: usize,
    pub column: usize,
    /// The offending text (its first line).
    pub text: String,
    pub message: String,
}

fn located_lines(file: &str, errors: &[Located]) -> String {
    errors
        .iter()
        .map(|e| {
            format!(
                "{file}:{}:{}: {} (at `{}`)",
                e.line, e.column, e.message, e.text
            )
        })
        .collect::<Vec<_>>()
        .join("\n")
}

/// A failure to write an output.
#[derive(Debug, Error)]
#[error("cannot write {path}: {source}")]
pub struct WriteError {
    pub path: PathBuf,
    #[source]
    pub source: std::io::Error,
}

impl WriteError {
    /// A failure reported by a writer library (a workbook or parquet writer) as text.
    pub fn other(path: &std::path::Path, e: impl std::fmt::Display) -> WriteError {
        WriteError {
            path: path.to_path_buf(),
            source: std::io::Error::other(e.to_string()),
        }
    }
}

/// Parses a TOML configuration file's text; a syntax error or an unknown key becomes an error
/// located to line and column of `file`.
pub fn parse_toml<T: serde::de::DeserializeOwned>(
    text: &str,
    file: &str,
) -> Result<T, ConfigError> {
    toml::from_str(text).map_err(|e| {
        let (line, column) = toml_location(text, e.span());
        ConfigError::File {
            file: file.to_string(),
            line,
            column,
            message: e.message().trim().to_string(),
        }
    })
}

/// Turns a byte span from a TOML error into a 1-based line and column.
pub fn toml_location(text: &str, span: Option<std::ops::Range<usize>>) -> (usize, usize) {
    let Some(span) = span else { return (1, 1) };
    let upto = &text[..span.start.min(text.len())];
    let line = upto.matches('\n').count() + 1;
    let column = upto.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
    (line, column)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spans_become_lines_and_columns() {
        let text = "a = 1\nbb = x\n";
        assert_eq!(toml_location(text, Some(11..12)), (2, 6));
        assert_eq!(toml_location(text, None), (1, 1));
    }
}
