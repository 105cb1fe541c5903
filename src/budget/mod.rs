//! Reading a budget file: YAML text → raw schema (shape only) → validated
//! [`Budget`](crate::model::Budget). Every problem is reported with the
//! file, line, field, what is wrong and what would be right.

mod error;
mod locate;
mod raw;
mod validate;

pub use error::{Diagnostic, LoadError};
pub use locate::{Position, SourceMap};
pub use raw::budget_schema;

use crate::model::Budget;
use std::io::Read;
use std::path::Path;

/// The largest budget file read, in bytes. The biggest example is a few
/// kilobytes; a file past this is not a budget someone wrote.
pub const MAX_BUDGET_BYTES: u64 = 1 << 20;

/// Read and validate the budget file at `path`. Only a regular file is
/// read (never a device or a FIFO, which could block or never end), and
/// only up to [`MAX_BUDGET_BYTES`].
pub fn load_budget(path: &Path) -> Result<Budget, LoadError> {
    let refuse = |problem: String, fix: &str| {
        LoadError::Invalid(vec![Diagnostic {
            file: path.display().to_string(),
            position: None,
            field: None,
            problem,
            fix: Some(fix.to_string()),
            source_line: None,
        }])
    };
    let read_error = |source| LoadError::Read {
        path: path.to_path_buf(),
        source,
    };
    let metadata = std::fs::metadata(path).map_err(read_error)?;
    if !metadata.is_file() {
        return Err(refuse(
            "this is not a regular file (a folder, device or pipe), so it is not read as a budget"
                .into(),
            "give the path of a budget file (YAML), e.g. budgets/load-cell-scale.yaml",
        ));
    }
    if metadata.len() > MAX_BUDGET_BYTES {
        return Err(refuse(
            format!(
                "the file holds {} bytes, more than the {MAX_BUDGET_BYTES} a budget may have",
                metadata.len()
            ),
            "a budget describes one front end in a few kilobytes; check that this is the right file",
        ));
    }
    let bytes = std::fs::read(path).map_err(read_error)?;
    parse_budget_bytes(&bytes, &path.display().to_string())
}

/// Read and validate a budget from `reader` (standard input, say), at most
/// [`MAX_BUDGET_BYTES`] of it; `file` names it in messages.
pub fn read_budget(reader: impl std::io::Read, file: &str) -> Result<Budget, LoadError> {
    let mut bytes = Vec::new();
    reader
        .take(MAX_BUDGET_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|source| LoadError::Read {
            path: file.into(),
            source,
        })?;
    if bytes.len() as u64 > MAX_BUDGET_BYTES {
        return Err(LoadError::Invalid(vec![Diagnostic {
            file: file.to_string(),
            position: None,
            field: None,
            problem: format!("more than the {MAX_BUDGET_BYTES} bytes a budget may have"),
            fix: Some("a budget describes one front end in a few kilobytes; check that this is the right input".into()),
            source_line: None,
        }]));
    }
    parse_budget_bytes(&bytes, file)
}

/// Decode budget-file bytes as UTF-8 (a located problem where they are
/// not) and validate them.
fn parse_budget_bytes(bytes: &[u8], file: &str) -> Result<Budget, LoadError> {
    let text = std::str::from_utf8(bytes).map_err(|error| {
        let valid = &bytes[..error.valid_up_to()];
        let line = valid.iter().filter(|b| **b == b'\n').count() + 1;
        let column = valid.iter().rev().take_while(|b| **b != b'\n').count() + 1;
        LoadError::Invalid(vec![Diagnostic {
            file: file.to_string(),
            position: Some(Position { line, column }),
            field: None,
            problem: "the file is not valid UTF-8 text here".into(),
            fix: Some("save the budget as UTF-8 (the usual encoding of YAML); `Ω` and `±` may also be written `ohm` and `+-`".into()),
            source_line: None,
        }])
    })?;
    parse_budget(text, file)
}

/// Validate budget-file `text`; `file` names it in messages.
pub fn parse_budget(text: &str, file: &str) -> Result<Budget, LoadError> {
    let has_content = text
        .lines()
        .any(|line| !line.trim().is_empty() && !line.trim_start().starts_with('#'));
    if !has_content {
        return Err(LoadError::Invalid(vec![Diagnostic {
            file: file.to_string(),
            position: None,
            field: None,
            problem: "the budget file is empty".into(),
            fix: Some(
                "start from one of the examples in budgets/ and describe your front end".into(),
            ),
            source_line: None,
        }]));
    }
    let map = SourceMap::build(text);
    let located = |problems: Vec<Diagnostic>| {
        LoadError::Invalid(problems.into_iter().map(|d| d.with_source(text)).collect())
    };
    let raw: raw::RawBudget =
        serde_yaml::from_str(text).map_err(|e| located(vec![yaml_diagnostic(&e, file, &map)]))?;
    validate::validate(raw, file, &map).map_err(located)
}

/// Turn a serde_yaml error into a diagnostic with a suggested fix.
fn yaml_diagnostic(error: &serde_yaml::Error, file: &str, map: &SourceMap) -> Diagnostic {
    let full = error.to_string();
    // serde_yaml writes "path: message at line L column C".
    let without_position = match full.rfind(" at line ") {
        Some(at) => &full[..at],
        None => full.as_str(),
    };
    let (field, message) = match without_position.split_once(": ") {
        Some((path, message)) if !path.contains(' ') && !path.contains('`') => {
            (Some(path.to_string()), message.to_string())
        }
        _ => (None, without_position.to_string()),
    };
    let position = error
        .location()
        .map(|l| Position {
            line: l.line(),
            column: l.column(),
        })
        .or_else(|| field.as_deref().and_then(|f| map.locate(f)));
    // Names already used in the same map are not suggested again.
    let taken = |name: &str| {
        field
            .as_deref()
            .is_some_and(|f| map.contains(&format!("{f}.{name}")))
    };
    let fix = suggest_fix(&message, taken);
    let message = readable_type_names(&message);
    Diagnostic {
        file: file.to_string(),
        position,
        field,
        problem: message,
        fix,
        source_line: None,
    }
}

/// serde names the schema's Rust types in some messages; say what they are
/// in the budget file's own terms instead.
fn readable_type_names(message: &str) -> String {
    let mut text = message.replace(
        "struct RawBudget",
        "a budget: a map with `name`, `chain` and `interference`",
    );
    for kind in [
        "Source",
        "Cable",
        "DifferenceAmp",
        "OpAmp",
        "Interference",
        "Requirement",
        "MinimumCmrr",
    ] {
        text = text.replace(&format!("struct Raw{kind}"), "a map of named fields");
    }
    text.replace(
        "enum RawStage",
        "a stage such as `source: {…}` or `difference_amp: {…}`",
    )
}

/// The words between backticks in `text`.
fn quoted(text: &str) -> Vec<&str> {
    text.split('`').skip(1).step_by(2).collect()
}

fn suggest_fix(message: &str, taken: impl Fn(&str) -> bool) -> Option<String> {
    if message.starts_with("unknown field") || message.starts_with("unknown variant") {
        let words = quoted(message);
        let (unknown, expected) = words.split_first()?;
        let what = if message.starts_with("unknown field") {
            "field"
        } else {
            "stage kind"
        };
        if expected.is_empty() {
            return Some(format!("remove `{unknown}`: this map takes no such {what}"));
        }
        let free: Vec<&str> = expected
            .iter()
            .copied()
            .filter(|name| !taken(name))
            .collect();
        return Some(match error::closest(unknown, &free) {
            Some(best) => format!("did you mean `{best}`? (valid: {})", expected.join(", ")),
            None => format!("use one of: {}", expected.join(", ")),
        });
    }
    if let Some(rest) = message.strip_prefix("missing field ") {
        let name = rest.trim_matches('`');
        return Some(format!("add `{name}: …` here; if it is there, check its indentation: a stage's fields sit deeper than its name, all at one depth (`- difference_amp:` then `    {name}: …`)"));
    }
    if message.contains("while scanning") || message.contains("while parsing") {
        return Some("this is not valid YAML: check quotes, brackets and indentation (spaces only, no tabs) on this line and the one before".into());
    }
    if message.contains("invalid type") {
        return Some("check the indentation and the kind of value: a map (`key: value` lines), a list (`- item` lines) or a single value".into());
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fixes_for_unknown_names() {
        let none = |_: &str| false;
        let message = "unknown field `r5`, expected one of `label`, `r1`, `r2`, `r3`, `r4`";
        let fix = suggest_fix(message, none).unwrap();
        assert!(fix.starts_with("did you mean `r1`?"), "{fix}");
        // Names already present in the map are not suggested.
        let fix = suggest_fix(message, |n: &str| n != "r4").unwrap();
        assert!(fix.starts_with("did you mean `r4`?"), "{fix}");
        let message = "unknown variant `diff_amp`, expected `source` or `difference_amp`";
        let fix = suggest_fix(message, none).unwrap();
        assert!(fix.contains("`difference_amp`"), "{fix}");
        assert!(suggest_fix("missing field `r4`", none)
            .unwrap()
            .starts_with("add `r4: …` here; if it is there, check its indentation"));
    }
}
