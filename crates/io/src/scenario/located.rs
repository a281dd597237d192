//! Source locations of scenario values and the error that carries them.

use std::ops::Range;

/// A value with the byte range it was written at in the scenario text.
pub type Located<T> = toml::Spanned<T>;

/// A problem with a scenario file: where (file, line, column) and what was expected.
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error("{file}:{line}:{column}: {message}")]
pub struct ScenarioError {
    /// The scenario file as the user named it.
    pub file: String,
    /// 1-based line.
    pub line: usize,
    /// 1-based column (in characters).
    pub column: usize,
    /// What is wrong and what was expected.
    pub message: String,
}

impl ScenarioError {
    /// An error at byte offset `at` of `text`.
    pub fn at(text: &str, file: &str, at: usize, message: impl Into<String>) -> Self {
        let (line, column) = line_column(text, at);
        ScenarioError {
            file: file.to_string(),
            line,
            column,
            message: message.into(),
        }
    }

    /// An error at the start of `span` (byte range) in `text`.
    pub fn at_span(text: &str, file: &str, span: Range<usize>, message: impl Into<String>) -> Self {
        Self::at(text, file, span.start, message)
    }
}

/// 1-based line and column (characters) of byte offset `at` in `text` (clamped to the end).
pub fn line_column(text: &str, at: usize) -> (usize, usize) {
    let mut at = at.min(text.len());
    while !text.is_char_boundary(at) {
        at -= 1;
    }
    let before = &text[..at];
    let line = before.matches('\n').count() + 1;
    let line_start = before.rfind('\n').map_or(0, |i| i + 1);
    let column = before[line_start..].chars().count() + 1;
    (line, column)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lines_and_columns_are_one_based() {
        let text = "a = 1\nbé = 2\n";
        assert_eq!(line_column(text, 0), (1, 1));
        assert_eq!(line_column(text, 4), (1, 5));
        assert_eq!(line_column(text, 6), (2, 1));
        // 'é' is two bytes; the column counts characters.
        assert_eq!(line_column(text, 9), (2, 3));
        assert_eq!(line_column(text, 1000), (3, 1));
    }
}
