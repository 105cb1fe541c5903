//! The JSON report: the [`Report`] serialized as is. Its layout is a
//! versioned contract (`schema_version`), documented in the README.

use super::Report;

/// The report as pretty-printed JSON, ending with a newline.
pub fn render_json(report: &Report) -> String {
    let mut text = serde_json::to_string_pretty(report)
        .expect("a report holds only strings, numbers and lists, which always serialize");
    text.push('\n');
    text
}
