//! Errors from reading a budget file: each names the file, the line, the
//! field, what is wrong and what would be right.

use super::locate::Position;
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
        };
        assert_eq!(
            d.to_string(),
            "a.yaml:3:7: field `chain[0].source.resistance`: a resistance must be above zero\n  fix: write e.g. `1k`"
        );
    }
}
