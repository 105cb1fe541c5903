//! JSON: a report serialized as is, with a field naming the report and
//! figures rounded to ten significant digits (the last digits of a double
//! are rounding noise, `9.999999999999999e-6`, not information). The
//! layout is a versioned contract (`schema_version`), documented in the
//! README.

use serde::Serialize;
use serde_json::Value;

/// Significant digits kept in JSON figures.
pub const SIGNIFICANT_DIGITS: usize = 10;

/// A report as pretty-printed JSON, ending with a newline, with
/// `"report": kind` first.
pub fn to_json<T: Serialize + ?Sized>(report: &T, kind: &str) -> String {
    let mut value = serde_json::to_value(report)
        .expect("a report holds only strings, numbers and lists, which always serialize");
    round_numbers(&mut value);
    if let Value::Object(fields) = &mut value {
        fields.shift_insert(0, "report".to_string(), Value::String(kind.to_string()));
    }
    let mut text = serde_json::to_string_pretty(&value).expect("a JSON value serializes");
    text.push('\n');
    text
}

/// `x` rounded to [`SIGNIFICANT_DIGITS`] significant digits.
pub fn rounded(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    format!("{:.*e}", SIGNIFICANT_DIGITS - 1, x)
        .parse()
        .unwrap_or(x)
}

fn round_numbers(value: &mut Value) {
    match value {
        Value::Number(n) if n.is_f64() => {
            if let Some(x) = n.as_f64() {
                if let Some(r) = serde_json::Number::from_f64(rounded(x)) {
                    *n = r;
                }
            }
        }
        Value::Array(items) => items.iter_mut().for_each(round_numbers),
        Value::Object(fields) => fields.values_mut().for_each(round_numbers),
        _ => {}
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn issue_17_float_noise_is_rounded_and_the_report_named() {
        assert_eq!(rounded(9.999999999999999e-6), 1e-5);
        assert_eq!(rounded(0.1 + 0.2), 0.3);
        assert_eq!(rounded(123.456), 123.456);
        let text = to_json(
            &serde_json::json!({"a": 0.30000000000000004, "b": [1, 2.5]}),
            "demo",
        );
        assert!(text.starts_with("{\n  \"report\": \"demo\""), "{text}");
        assert!(text.contains("\"a\": 0.3,"), "{text}");
        assert!(text.contains("1,"), "integers stay integers: {text}");
    }
}
