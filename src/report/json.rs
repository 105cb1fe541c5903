//! JSON: a report serialized as is. Its layout is a versioned contract
//! (`schema_version`), documented in the README.

use serde::Serialize;

/// A report as pretty-printed JSON, ending with a newline.
pub fn to_json<T: Serialize + ?Sized>(report: &T) -> String {
    let mut text = serde_json::to_string_pretty(report)
        .expect("a report holds only strings, numbers and lists, which always serialize");
    text.push('\n');
    text
}
