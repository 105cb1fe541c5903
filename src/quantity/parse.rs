//! The engineering-notation parser: a number, an optional SI prefix, an
//! optional unit, an optional amplitude form, an optional tolerance, and
//! nothing else.
//!
//! Accepted shapes (the field decides the dimension):
//! `10k`, `4k7`, `2R2`, `350 Ω`, `4.7 nF`, `100p`, `50 Hz`, `DC`, `1 V rms`,
//! `10 mV pp`, `0.1 %`, `50 ppm`, `5 ppm/K`, `110 dB`, `85 degC`, `5 m`,
//! `100 pF/m`, and any of the part values with a tolerance: `10k ±0.1 %`,
//! `10k +-0.1%`, `10k +/-0.1 %`.

use super::dimension::{prefix_multiplier, Dimension, UnitSpelling, UNITS};
use std::fmt;
use thiserror::Error;

/// How an alternating amplitude is stated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum AmplitudeForm {
    /// Root-mean-square value of a sinusoid.
    Rms,
    /// Peak value (zero to peak).
    Peak,
    /// Peak-to-peak value.
    PeakToPeak,
}

impl AmplitudeForm {
    /// The factor that turns a value in this form into a peak value, for a
    /// sinusoid.
    pub fn to_peak_factor(self) -> f64 {
        match self {
            AmplitudeForm::Rms => std::f64::consts::SQRT_2,
            AmplitudeForm::Peak => 1.0,
            AmplitudeForm::PeakToPeak => 0.5,
        }
    }

    /// The name used in JSON and CSV: `rms`, `peak`, `peak_to_peak`.
    pub fn name(self) -> &'static str {
        match self {
            AmplitudeForm::Rms => "rms",
            AmplitudeForm::Peak => "peak",
            AmplitudeForm::PeakToPeak => "peak_to_peak",
        }
    }

    /// The suffix printed after a voltage in this form.
    pub fn suffix(self) -> &'static str {
        match self {
            AmplitudeForm::Rms => "rms",
            AmplitudeForm::Peak => "pk",
            AmplitudeForm::PeakToPeak => "pp",
        }
    }
}

impl fmt::Display for AmplitudeForm {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.suffix())
    }
}

/// A parsed value in SI units.
#[derive(Debug, Clone, PartialEq)]
pub struct Quantity {
    /// The value in SI base units; decibels are turned into a linear voltage
    /// ratio, degrees Celsius into kelvin, `%` and `ppm` into fractions.
    pub value: f64,
    /// The dimension the value was parsed as.
    pub dimension: Dimension,
    /// For voltages: rms, peak or peak-to-peak, when written.
    pub form: Option<AmplitudeForm>,
    /// A relative tolerance (a fraction, `0.001` for ±0.1 %), when written.
    pub tolerance: Option<f64>,
    /// Whether the value was written in decibels.
    pub in_decibels: bool,
    /// The distribution named after the tolerance (`uniform`, `normal`,
    /// `truncated`), when written.
    pub distribution: Option<SpreadShape>,
}

/// How a toleranced value spreads in production, as written after its
/// tolerance.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SpreadShape {
    /// Anywhere within the tolerance, evenly.
    Uniform,
    /// Normal, the tolerance at k standard deviations (k from the budget).
    Normal,
    /// Normal, cut off at the tolerance (parts outside were screened out).
    Truncated,
}

/// Why a text is not a valid quantity for its field.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum QuantityError {
    /// Nothing was written.
    #[error("the value is empty; expected {}", .expected.describe())]
    Empty {
        /// What the field expects.
        expected: Dimension,
    },
    /// The text does not start with a number.
    #[error("`{text}` does not start with a number; expected {}", .expected.describe())]
    NoNumber {
        /// The offending text.
        text: String,
        /// What the field expects.
        expected: Dimension,
    },
    /// A number that is not finite.
    #[error("`{text}` is not a finite number; expected {}", .expected.describe())]
    NotFinite {
        /// The offending text.
        text: String,
        /// What the field expects.
        expected: Dimension,
    },
    /// The unit is not one the parser knows.
    #[error("`{unit}` in `{text}` is not a unit this tool knows; expected {}", .expected.describe())]
    UnknownUnit {
        /// The unrecognised unit text.
        unit: String,
        /// The whole text.
        text: String,
        /// What the field expects.
        expected: Dimension,
    },
    /// The unit belongs to another dimension.
    #[error("`{text}` is a {found}, but this field takes {}", .expected.describe())]
    WrongDimension {
        /// The whole text.
        text: String,
        /// The dimension that was written.
        found: Dimension,
        /// What the field expects.
        expected: Dimension,
    },
    /// A number with no unit where a unit is required.
    #[error("`{text}` needs a unit: this field takes {}", .expected.describe())]
    MissingUnit {
        /// The whole text.
        text: String,
        /// What the field expects.
        expected: Dimension,
    },
    /// rms/pk/pp written after something that is not a voltage.
    #[error("`{text}`: `{form}` only follows a voltage")]
    FormNotVoltage {
        /// The whole text.
        text: String,
        /// The form that was written.
        form: String,
    },
    /// The tolerance part is malformed.
    #[error("the tolerance in `{text}` is not valid: {reason}")]
    BadTolerance {
        /// The whole text.
        text: String,
        /// What is wrong with it.
        reason: String,
    },
    /// Text left over after the value and unit.
    #[error("`{text}` has unexpected text `{rest}` after the value; expected {}", .expected.describe())]
    TrailingText {
        /// The whole text.
        text: String,
        /// The left-over part.
        rest: String,
        /// What the field expects.
        expected: Dimension,
    },
}

impl QuantityError {
    /// What would be right, for the message's "fix" line.
    pub fn fix(&self) -> String {
        match self {
            QuantityError::BadTolerance { .. } => {
                "write the tolerance as a percentage or ppm below 100 %, e.g. `±0.1 %` or `±50 ppm`"
                    .to_string()
            }
            QuantityError::FormNotVoltage { .. } => {
                "remove rms/pk/pp: only voltages take them".to_string()
            }
            QuantityError::Empty { expected }
            | QuantityError::NoNumber { expected, .. }
            | QuantityError::NotFinite { expected, .. }
            | QuantityError::UnknownUnit { expected, .. }
            | QuantityError::WrongDimension { expected, .. }
            | QuantityError::MissingUnit { expected, .. }
            | QuantityError::TrailingText { expected, .. } => {
                format!("write {}", expected.describe())
            }
        }
    }
}

/// Parse `text` as a quantity of dimension `expected`.
///
/// A tolerance (`±0.1 %`) and an amplitude form (`rms`) are returned when
/// written; the caller decides whether its field allows them.
pub fn parse_quantity(text: &str, expected: Dimension) -> Result<Quantity, QuantityError> {
    let trimmed = text.trim();
    if trimmed.is_empty() {
        return Err(QuantityError::Empty { expected });
    }
    let (value_part, tolerance, distribution) = split_tolerance(trimmed, expected)?;
    let mut quantity = parse_value(value_part.trim(), trimmed, expected)?;
    quantity.tolerance = match tolerance {
        Some(Tolerance::Relative(t)) => Some(t),
        Some(Tolerance::Absolute(t)) => Some(relative_of(t, quantity.value, trimmed)?),
        None => None,
    };
    quantity.distribution = distribution;
    Ok(quantity)
}

/// A tolerance as written: a fraction (`±1 %`), or an amount of the value's
/// own dimension (`5 pF ±0.5 pF`).
enum Tolerance {
    Relative(f64),
    Absolute(f64),
}

/// An absolute tolerance as a fraction of `value`.
fn relative_of(absolute: f64, value: f64, text: &str) -> Result<f64, QuantityError> {
    let bad = |reason: &str| QuantityError::BadTolerance {
        text: text.to_string(),
        reason: reason.to_string(),
    };
    if value == 0.0 {
        return Err(bad(
            "an absolute tolerance needs a value to be relative to; give it as a percentage",
        ));
    }
    let relative = absolute / value.abs();
    if relative >= 1.0 {
        return Err(bad(
            "the tolerance is as large as the value or larger; tolerances are below 100 %",
        ));
    }
    Ok(relative)
}

/// Split `10k ±0.1 %` into `10k` and the tolerance (a fraction, or an
/// amount in the field's own unit: `5 pF ±0.5 pF`).
fn split_tolerance(
    text: &str,
    expected: Dimension,
) -> Result<(&str, Option<Tolerance>, Option<SpreadShape>), QuantityError> {
    let marker = ["±", "+/-", "+-"]
        .iter()
        .filter_map(|m| text.find(m).map(|at| (at, m.len())))
        .min_by_key(|(at, _)| *at);
    let Some((at, len)) = marker else {
        return Ok((text, None, None));
    };
    let mut tolerance_text = text[at + len..].trim();
    let mut shape = None;
    for (word, named) in [
        ("uniform", SpreadShape::Uniform),
        ("normal", SpreadShape::Normal),
        ("truncated", SpreadShape::Truncated),
    ] {
        if let Some(rest) = tolerance_text.strip_suffix(word) {
            tolerance_text = rest.trim();
            shape = Some(named);
            break;
        }
    }
    let bad = |reason: &str| QuantityError::BadTolerance {
        text: text.to_string(),
        reason: reason.to_string(),
    };
    if tolerance_text.is_empty() {
        return Err(bad("nothing follows `±`; write e.g. `±0.1 %` or `±50 ppm`"));
    }
    if let Ok(absolute) = parse_value(tolerance_text, tolerance_text, expected) {
        let written_with_unit = tolerance_text
            .chars()
            .any(|c| c.is_alphabetic() || c == 'Ω');
        if absolute.dimension == expected && written_with_unit && expected != Dimension::Fraction {
            if absolute.value < 0.0 {
                return Err(bad("a tolerance is a magnitude; drop the sign after `±`"));
            }
            return Ok((
                &text[..at],
                Some(Tolerance::Absolute(absolute.value)),
                shape,
            ));
        }
    }
    let parsed = parse_value(tolerance_text, tolerance_text, Dimension::Fraction).map_err(|_| {
        bad("write it as a percentage or ppm, e.g. `±0.1 %` or `±50 ppm`, or as an amount in the value's unit, e.g. `5 pF ±0.5 pF`")
    })?;
    if parsed.value < 0.0 {
        return Err(bad("a tolerance is a magnitude; drop the sign after `±`"));
    }
    if parsed.value >= 1.0 {
        return Err(bad(
            "a tolerance of 100 % or more is not physical; tolerances are below 100 %",
        ));
    }
    Ok((&text[..at], Some(Tolerance::Relative(parsed.value)), shape))
}

/// `Vrms`, `mVpp`, `uV_pk`, `Vp-p`: a voltage unit with its form glued on,
/// split into the unit and the form.
fn glued_form(word: &str) -> Option<(&str, AmplitudeForm)> {
    for suffix in ["rms", "pk", "pp", "p-p"] {
        if let Some(unit) = word.strip_suffix(suffix) {
            let unit = unit.trim_end_matches('_');
            if unit.ends_with('V') && unit.chars().count() <= 2 {
                return Some((unit, amplitude_form(suffix)?));
            }
        }
    }
    None
}

/// Parse a number with optional prefix, unit and amplitude form.
fn parse_value(text: &str, whole: &str, expected: Dimension) -> Result<Quantity, QuantityError> {
    if expected == Dimension::Frequency && text.eq_ignore_ascii_case("dc") {
        return Ok(Quantity {
            value: 0.0,
            dimension: Dimension::Frequency,
            form: None,
            tolerance: None,
            in_decibels: false,
            distribution: None,
        });
    }
    let lowered = text
        .trim_start_matches(['+', '-', '.'])
        .to_ascii_lowercase();
    if ["inf", "infinity", "nan"]
        .iter()
        .any(|word| lowered.starts_with(word))
    {
        return Err(QuantityError::NotFinite {
            text: whole.to_string(),
            expected,
        });
    }
    let (number, rest) = scan_number(text).ok_or_else(|| QuantityError::NoNumber {
        text: whole.to_string(),
        expected,
    })?;
    if !number.is_finite() {
        return Err(QuantityError::NotFinite {
            text: whole.to_string(),
            expected,
        });
    }
    let mut words: Vec<&str> = rest.split_whitespace().collect();
    let form = match words.last().and_then(|w| amplitude_form(w)) {
        Some(form) => {
            words.pop();
            Some(form)
        }
        None => match words.last().and_then(|w| glued_form(w)) {
            Some((unit, form)) => {
                words.pop();
                words.push(unit);
                Some(form)
            }
            None => None,
        },
    };
    // `10k 1%`: a tolerance written without its `±`.
    if words.len() >= 2
        && words[1..].iter().any(|w| {
            w.starts_with(|c: char| c.is_ascii_digit()) && (w.ends_with('%') || w.ends_with("ppm"))
        })
    {
        return Err(QuantityError::BadTolerance {
            text: whole.to_string(),
            reason: "a tolerance follows `±`: write e.g. `10k ±1 %`".to_string(),
        });
    }
    // `200k V/V`: a prefix glued to the number, the unit after a space.
    let joined;
    if words.len() == 2 && prefix_multiplier(words[0]).is_some() {
        joined = format!("{}{}", words[0], words[1]);
        words = vec![joined.as_str()];
    }
    if words.len() > 1 {
        return Err(QuantityError::TrailingText {
            text: whole.to_string(),
            rest: words[1..].join(" "),
            expected,
        });
    }
    let unit_text = words.first().copied().unwrap_or("");
    let (value, dimension, in_decibels) = resolve_unit(number, unit_text, whole, expected)?;
    if let Some(form) = form {
        if dimension != Dimension::Voltage {
            return Err(QuantityError::FormNotVoltage {
                text: whole.to_string(),
                form: form.suffix().to_string(),
            });
        }
    }
    if !value.is_finite() {
        return Err(QuantityError::NotFinite {
            text: whole.to_string(),
            expected,
        });
    }
    Ok(Quantity {
        value,
        dimension,
        form,
        tolerance: None,
        in_decibels,
        distribution: None,
    })
}

fn amplitude_form(word: &str) -> Option<AmplitudeForm> {
    match word {
        "rms" | "RMS" => Some(AmplitudeForm::Rms),
        "pk" | "peak" | "Pk" => Some(AmplitudeForm::Peak),
        "pp" | "p-p" | "pk-pk" => Some(AmplitudeForm::PeakToPeak),
        _ => None,
    }
}

/// Read a leading decimal number, including the resistor-code form where a
/// prefix letter (or `R` for ohms) stands in for the decimal point (`4k7`,
/// `2R2`, `4n7`). Returns the number and the rest of the text.
fn scan_number(text: &str) -> Option<(f64, &str)> {
    let bytes = text.as_bytes();
    let mut end = 0;
    if end < bytes.len() && (bytes[end] == b'+' || bytes[end] == b'-') {
        end += 1;
    }
    let digits_start = end;
    while end < bytes.len() && bytes[end].is_ascii_digit() {
        end += 1;
    }
    let integer_end = end;
    if end < bytes.len() && bytes[end] == b'.' {
        end += 1;
        while end < bytes.len() && bytes[end].is_ascii_digit() {
            end += 1;
        }
    }
    if end == digits_start || (end == digits_start + 1 && bytes[digits_start] == b'.') {
        return None;
    }
    // Exponent: only when followed by a digit, so `5 e` is not swallowed.
    if end < bytes.len() && (bytes[end] == b'e' || bytes[end] == b'E') {
        let mut probe = end + 1;
        if probe < bytes.len() && (bytes[probe] == b'+' || bytes[probe] == b'-') {
            probe += 1;
        }
        if probe < bytes.len() && bytes[probe].is_ascii_digit() {
            end = probe;
            while end < bytes.len() && bytes[end].is_ascii_digit() {
                end += 1;
            }
        }
    }
    // Resistor-code form: integer digits, one prefix letter or R, digits.
    if end == integer_end && integer_end > digits_start {
        if let Some((value, rest)) = scan_resistor_code(text, digits_start, integer_end) {
            return Some((value, rest));
        }
    }
    let value: f64 = text[..end].parse().ok()?;
    Some((value, &text[end..]))
}

fn scan_resistor_code(text: &str, digits_start: usize, integer_end: usize) -> Option<(f64, &str)> {
    let after = &text[integer_end..];
    let letter = after.chars().next()?;
    let multiplier = if letter == 'R' {
        1.0
    } else {
        prefix_multiplier(&letter.to_string())?
    };
    let fraction_start = integer_end + letter.len_utf8();
    let fraction_len = text[fraction_start..]
        .bytes()
        .take_while(|b| b.is_ascii_digit())
        .count();
    if fraction_len == 0 {
        return None;
    }
    let fraction_end = fraction_start + fraction_len;
    let digits = format!(
        "{}.{}",
        &text[digits_start..integer_end],
        &text[fraction_start..fraction_end]
    );
    let mantissa: f64 = digits.parse().ok()?;
    let sign = if text.starts_with('-') { -1.0 } else { 1.0 };
    let rest = &text[fraction_end..];
    // `4k7 Ω` is fine; `4k7 kΩ` is not (two prefixes).
    Some((sign * mantissa * multiplier, rest))
}

/// One way of reading the unit text: its multiplier and its unit, or a bare
/// prefix (`unit == None`).
struct Reading {
    multiplier: f64,
    unit: Option<&'static UnitSpelling>,
}

fn readings(unit_text: &str) -> Vec<Reading> {
    let mut found = Vec::new();
    if unit_text.is_empty() {
        found.push(Reading {
            multiplier: 1.0,
            unit: None,
        });
        return found;
    }
    for spelling in UNITS {
        if unit_text == spelling.text {
            found.push(Reading {
                multiplier: 1.0,
                unit: Some(spelling),
            });
        } else if spelling.takes_prefix {
            if let Some(prefix) = unit_text.strip_suffix(spelling.text) {
                if let Some(multiplier) = prefix_multiplier(prefix) {
                    found.push(Reading {
                        multiplier,
                        unit: Some(spelling),
                    });
                }
            }
        }
    }
    if let Some(multiplier) = prefix_multiplier(unit_text) {
        found.push(Reading {
            multiplier,
            unit: None,
        });
    }
    found
}

fn fits(expected: Dimension, written: Dimension) -> bool {
    expected == written || (expected == Dimension::Gain && written == Dimension::Decibels)
}

fn resolve_unit(
    number: f64,
    unit_text: &str,
    whole: &str,
    expected: Dimension,
) -> Result<(f64, Dimension, bool), QuantityError> {
    let candidates = readings(unit_text);
    if candidates.is_empty() {
        return Err(QuantityError::UnknownUnit {
            unit: unit_text.to_string(),
            text: whole.to_string(),
            expected,
        });
    }
    for reading in &candidates {
        match reading.unit {
            Some(spelling) if fits(expected, spelling.dimension) => {
                let value = if spelling.decibel {
                    10f64.powf(number * reading.multiplier / 20.0)
                } else {
                    number * reading.multiplier * spelling.scale + spelling.offset
                };
                return Ok((value, expected, spelling.decibel));
            }
            None if expected.accepts_bare_number() => {
                return Ok((number * reading.multiplier, expected, false));
            }
            _ => {}
        }
    }
    match candidates.iter().find_map(|r| r.unit) {
        Some(spelling) => Err(QuantityError::WrongDimension {
            text: whole.to_string(),
            found: spelling.dimension,
            expected,
        }),
        None => Err(QuantityError::MissingUnit {
            text: whole.to_string(),
            expected,
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Spellings engineers write (issue 17): a form glued to the unit, an
    /// absolute tolerance in the value's unit, and a missing `±` told as
    /// such.
    #[test]
    fn issue_17_notation_engineers_write() {
        for (text, volts, form) in [
            ("1 Vrms", 1.0, AmplitudeForm::Rms),
            ("1Vrms", 1.0, AmplitudeForm::Rms),
            ("300 mVpp", 0.3, AmplitudeForm::PeakToPeak),
            ("5 µV_pk", 5e-6, AmplitudeForm::Peak),
            ("2 Vp-p", 2.0, AmplitudeForm::PeakToPeak),
        ] {
            let q = parse_quantity(text, Dimension::Voltage).unwrap();
            assert!((q.value - volts).abs() < 1e-15, "{text}");
            assert_eq!(q.form, Some(form), "{text}");
        }
        let q = parse_quantity("5 pF ±0.5 pF", Dimension::Capacitance).unwrap();
        assert!((q.tolerance.unwrap() - 0.1).abs() < 1e-12);
        let q = parse_quantity("10k ±10", Dimension::Resistance).unwrap_err();
        assert!(matches!(q, QuantityError::BadTolerance { .. }));
        let q = parse_quantity("1k ±2k", Dimension::Resistance).unwrap_err();
        assert!(q.to_string().contains("as large as the value"), "{q}");
        let q = parse_quantity("10k 1%", Dimension::Resistance).unwrap_err();
        assert!(q.to_string().contains("a tolerance follows `±`"), "{q}");
    }
    use approx::assert_relative_eq;

    fn value(text: &str, dimension: Dimension) -> f64 {
        parse_quantity(text, dimension)
            .unwrap_or_else(|e| panic!("{text}: {e}"))
            .value
    }

    #[test]
    fn resistances_in_every_spelling() {
        assert_relative_eq!(value("10k", Dimension::Resistance), 10e3);
        assert_relative_eq!(value("10 kΩ", Dimension::Resistance), 10e3);
        assert_relative_eq!(value("10 kohm", Dimension::Resistance), 10e3);
        assert_relative_eq!(value("4k7", Dimension::Resistance), 4.7e3);
        assert_relative_eq!(value("2R2", Dimension::Resistance), 2.2);
        assert_relative_eq!(value("350 Ω", Dimension::Resistance), 350.0);
        assert_relative_eq!(value("350 \u{2126}", Dimension::Resistance), 350.0);
        assert_relative_eq!(value("1M", Dimension::Resistance), 1e6);
        assert_relative_eq!(value("10m", Dimension::Resistance), 10e-3);
        assert_relative_eq!(value("1e3", Dimension::Resistance), 1e3);
        assert_relative_eq!(value("10R", Dimension::Resistance), 10.0);
    }

    #[test]
    fn prefixes_and_units() {
        assert_relative_eq!(value("4.7 nF", Dimension::Capacitance), 4.7e-9);
        assert_relative_eq!(value("4n7", Dimension::Capacitance), 4.7e-9);
        assert_relative_eq!(value("100p", Dimension::Capacitance), 100e-12);
        assert_relative_eq!(value("50 Hz", Dimension::Frequency), 50.0);
        assert_relative_eq!(value("10kHz", Dimension::Frequency), 10e3);
        assert_relative_eq!(value("1 MHz", Dimension::Frequency), 1e6);
        assert_relative_eq!(value("DC", Dimension::Frequency), 0.0);
        assert_relative_eq!(value("5 m", Dimension::Length), 5.0);
        assert_relative_eq!(value("300 mm", Dimension::Length), 0.3);
        assert_relative_eq!(value("100 pF/m", Dimension::CapacitancePerLength), 100e-12);
        assert_relative_eq!(value("0.1 %", Dimension::Fraction), 1e-3);
        assert_relative_eq!(value("50 ppm", Dimension::Fraction), 50e-6);
        assert_relative_eq!(value("5 ppm/K", Dimension::TemperatureCoefficient), 5e-6);
        assert_relative_eq!(value("85 degC", Dimension::Temperature), 358.15);
        assert_relative_eq!(value("1 µA", Dimension::Current), 1e-6);
        assert_relative_eq!(value("1 uA", Dimension::Current), 1e-6);
        assert_relative_eq!(value("10 ms", Dimension::Time), 10e-3);
        assert_relative_eq!(value("2 V/ns", Dimension::SlewRate), 2e9);
        assert_relative_eq!(value("50 V/us", Dimension::SlewRate), 50e6);
        assert_relative_eq!(value("1 kV/µs", Dimension::SlewRate), 1e9);
        assert_relative_eq!(value("5 mV/ms", Dimension::SlewRate), 5.0);
        assert_relative_eq!(value("20 mS", Dimension::Conductance), 20e-3);
    }

    #[test]
    fn decibels_are_twenty_log_ten() {
        // A voltage ratio: 20 dB is 10x, 100 dB is 1e5 (20 log10, never 10 log10).
        assert_relative_eq!(
            value("20 dB", Dimension::Decibels),
            10.0,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            value("100 dB", Dimension::Decibels),
            1e5,
            max_relative = 1e-12
        );
        assert_relative_eq!(value("120 dB", Dimension::Gain), 1e6, max_relative = 1e-12);
        assert_relative_eq!(value("1M", Dimension::Gain), 1e6);
        assert_relative_eq!(value("200k V/V", Dimension::Gain), 2e5);
    }

    #[test]
    fn amplitudes_keep_their_form() {
        let q = parse_quantity("1 V rms", Dimension::Voltage).unwrap();
        assert_eq!(q.form, Some(AmplitudeForm::Rms));
        assert_relative_eq!(q.value, 1.0);
        let q = parse_quantity("10 mV pp", Dimension::Voltage).unwrap();
        assert_eq!(q.form, Some(AmplitudeForm::PeakToPeak));
        assert_relative_eq!(q.value, 10e-3);
        let q = parse_quantity("2.5 V", Dimension::Voltage).unwrap();
        assert_eq!(q.form, None);
    }

    #[test]
    fn tolerances_in_both_spellings() {
        for text in [
            "10k ±0.1 %",
            "10k +-0.1%",
            "10k +/- 0.1 %",
            "10 kΩ ±1000 ppm",
        ] {
            let q = parse_quantity(text, Dimension::Resistance).unwrap();
            assert_relative_eq!(q.value, 10e3);
            assert_relative_eq!(q.tolerance.unwrap(), 1e-3, max_relative = 1e-12);
        }
    }

    #[test]
    fn tolerance_may_name_its_spread() {
        let q = parse_quantity("10k ±0.1 % uniform", Dimension::Resistance).unwrap();
        assert_eq!(q.distribution, Some(SpreadShape::Uniform));
        assert!((q.tolerance.unwrap() - 1e-3).abs() < 1e-15);
        let q = parse_quantity("4.7 nF ±5 % normal", Dimension::Capacitance).unwrap();
        assert_eq!(q.distribution, Some(SpreadShape::Normal));
        let q = parse_quantity("10k ±1 %", Dimension::Resistance).unwrap();
        assert_eq!(q.distribution, None);
    }

    #[test]
    fn wrong_dimension_is_named() {
        let err = parse_quantity("4.7 nF", Dimension::Resistance).unwrap_err();
        assert!(matches!(
            err,
            QuantityError::WrongDimension {
                found: Dimension::Capacitance,
                ..
            }
        ));
        assert!(err.to_string().contains("capacitance"));
        assert!(err.to_string().contains("resistance"));
    }

    #[test]
    fn bad_texts_are_refused() {
        assert!(matches!(
            parse_quantity("50", Dimension::Frequency),
            Err(QuantityError::MissingUnit { .. })
        ));
        assert!(matches!(
            parse_quantity("0.1", Dimension::Fraction),
            Err(QuantityError::MissingUnit { .. })
        ));
        assert!(matches!(
            parse_quantity("ten k", Dimension::Resistance),
            Err(QuantityError::NoNumber { .. })
        ));
        assert!(matches!(
            parse_quantity("10 parsecs", Dimension::Length),
            Err(QuantityError::UnknownUnit { .. })
        ));
        assert!(matches!(
            parse_quantity("10k ±100 %", Dimension::Resistance),
            Err(QuantityError::BadTolerance { .. })
        ));
        assert!(matches!(
            parse_quantity("10k ±", Dimension::Resistance),
            Err(QuantityError::BadTolerance { .. })
        ));
        assert!(matches!(
            parse_quantity("1 A rms", Dimension::Current),
            Err(QuantityError::FormNotVoltage { .. })
        ));
        assert!(matches!(
            parse_quantity("", Dimension::Resistance),
            Err(QuantityError::Empty { .. })
        ));
        assert!(matches!(
            parse_quantity("1e999", Dimension::Resistance),
            Err(QuantityError::NotFinite { .. })
        ));
        assert!(matches!(
            parse_quantity("10 kΩ extra", Dimension::Resistance),
            Err(QuantityError::TrailingText { .. })
        ));
    }
}
