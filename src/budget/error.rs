//! Errors from reading a budget file: each names the file, the line, the
//! field, what is wrong and what would be right.

use super::locate::Position;
use annotate_snippets::{Level, Renderer, Snippet};
use std::fmt;
use std::path::PathBuf;
use thiserror::Error;

/// One problem found in a budget file (serialised as `cmrr check
/// --format json` writes it).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Diagnostic {
    /// The file, as the user named it.
    pub file: String,
    /// Where in the file, when known.
    pub position: Option<Position>,
    /// The field path, e.g. `chain[1].difference_amp.r1`, when known.
    pub field: Option<String>,
    /// What is wrong.
    pub problem: String,
    /// What would be right.
    pub fix: Option<String>,
    /// The text of the line at `position`, shown under the message with
    /// the place marked; filled in once the file's text is at hand.
    #[serde(skip)]
    pub source_line: Option<String>,
}

impl Diagnostic {
    /// The same diagnostic with the line of `text` it points at.
    pub fn with_source(mut self, text: &str) -> Diagnostic {
        if let Some(position) = self.position {
            self.source_line = text
                .lines()
                .nth(position.line.saturating_sub(1))
                .map(str::to_string);
        }
        self
    }

    /// The source line with the value at the position marked, drawn by
    /// annotate-snippets (its title line, which would repeat the message,
    /// left out); empty without a source line.
    fn snippet(&self) -> String {
        let (Some(line), Some(position)) = (&self.source_line, self.position) else {
            return String::new();
        };
        // The marked span: from the column to the end of the value (a
        // trailing comment and spaces left out), at least one character.
        let start = line
            .char_indices()
            .nth(position.column.saturating_sub(1))
            .map_or(line.len(), |(byte, _)| byte);
        let rest = &line[start..];
        let value = rest.split(" #").next().unwrap_or("").trim_end();
        let end = if value.is_empty() {
            (start + rest.chars().next().map_or(0, char::len_utf8)).min(line.len())
        } else {
            start + value.len()
        };
        if start >= end {
            return String::new();
        }
        let message = Level::Error.title("").snippet(
            Snippet::source(line)
                .line_start(position.line)
                .annotation(Level::Error.span(start..end)),
        );
        let rendered = Renderer::plain().render(message).to_string();
        let mut lines: Vec<&str> = rendered.lines().skip(1).map(str::trim_end).collect();
        // A closing gutter line with nothing on it is left out.
        if lines.last().is_some_and(|l| l.trim() == "|") {
            lines.pop();
        }
        lines.iter().map(|l| format!("\n{l}")).collect()
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(position) = self.position {
            write!(f, ":{}:{}", position.line, position.column)?;
        }
        f.write_str(": ")?;
        if let Some(field) = &self.field {
            if !field.is_empty() {
                write!(f, "field `{field}`: ")?;
            }
        }
        f.write_str(&self.problem)?;
        f.write_str(&self.snippet())?;
        if let Some(fix) = &self.fix {
            write!(f, "\n  fix: {fix}")?;
        }
        Ok(())
    }
}

/// Why a budget could not be loaded.
#[derive(Debug, Error)]
pub enum LoadError {
    /// The file could not be read.
    #[error("cannot read budget file {}: {source}", .path.display())]
    Read {
        /// The path given.
        path: PathBuf,
        /// The operating system's reason.
        source: std::io::Error,
    },
    /// The file was read but is not a valid budget.
    #[error("{}", render(.0))]
    Invalid(Vec<Diagnostic>),
}

fn render(diagnostics: &[Diagnostic]) -> String {
    let mut text = diagnostics
        .iter()
        .map(ToString::to_string)
        .collect::<Vec<_>>()
        .join("\n");
    if diagnostics.len() > 1 {
        text.push_str(&format!("\n{} problems found", diagnostics.len()));
    }
    text
}

/// Levenshtein edit distance, for "did you mean" suggestions.
pub(crate) fn edit_distance(a: &str, b: &str) -> usize {
    let b_chars: Vec<char> = b.chars().collect();
    let mut previous: Vec<usize> = (0..=b_chars.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut current = vec![i + 1];
        for (j, cb) in b_chars.iter().enumerate() {
            let substitution = previous[j] + usize::from(ca != *cb);
            current.push(substitution.min(previous[j + 1] + 1).min(current[j] + 1));
        }
        previous = current;
    }
    previous[b_chars.len()]
}

/// The candidate closest to `word`, when it is close enough to be a likely
/// misspelling.
pub(crate) fn closest<'a>(word: &str, candidates: &[&'a str]) -> Option<&'a str> {
    candidates
        .iter()
        .map(|c| (edit_distance(word, c), *c))
        .filter(|(distance, c)| *distance * 2 <= word.chars().count().max(c.chars().count()))
        .min_by_key(|(distance, _)| *distance)
        .map(|(_, c)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn suggestions() {
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(closest("r5", &["r1", "r2", "label"]), Some("r1"));
        assert_eq!(
            closest("diff_amp", &["source", "difference_amp"]),
            Some("difference_amp")
        );
        assert_eq!(closest("zzzzzz", &["source", "difference_amp"]), None);
    }

    #[test]
    fn renders_file_line_field_and_fix() {
        let d = Diagnostic {
            file: "a.yaml".into(),
            position: Some(Position { line: 3, column: 7 }),
            field: Some("chain[0].source.resistance".into()),
            problem: "a resistance must be above zero".into(),
            fix: Some("write e.g. `1k`".into()),
            source_line: None,
        };
        assert_eq!(
            d.to_string(),
            "a.yaml:3:7: field `chain[0].source.resistance`: a resistance must be above zero\n  fix: write e.g. `1k`"
        );
    }

    /// Issue 17: the line is shown with the value marked, a trailing
    /// comment left out.
    #[test]
    fn issue_17_the_source_line_is_shown_with_the_value_marked() {
        let text = "name: x\nchain:\n  - source: {resistance: -1k}   # oops\n";
        let d = Diagnostic {
            file: "a.yaml".into(),
            position: Some(Position { line: 3, column: 5 }),
            field: Some("chain[0].source".into()),
            problem: "bad".into(),
            fix: None,
            source_line: None,
        }
        .with_source(text);
        assert_eq!(
            d.to_string(),
            "a.yaml:3:5: field `chain[0].source`: bad\n  |\n3 |   - source: {resistance: -1k}   # oops\n  |     ^^^^^^^^^^^^^^^^^^^^^^^^^"
        );
    }
}
