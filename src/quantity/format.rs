//! Printing values with SI prefixes and units, so that every number the
//! tool shows carries its unit.

/// Format `value` (in SI base units) with an SI prefix chosen so the mantissa
/// lies in [1, 1000), three significant digits, and the unit `symbol`.
///
/// Zero prints as `0 unit`; infinities as `∞ unit`.
pub fn format_si(value: f64, symbol: &str) -> String {
    let joined = |number: String, prefix: &str| {
        if symbol.is_empty() && prefix.is_empty() {
            number
        } else {
            format!("{number} {prefix}{symbol}")
        }
    };
    if value.is_nan() {
        return joined("NaN".to_string(), "");
    }
    if value.is_infinite() {
        let sign = if value < 0.0 { "-" } else { "" };
        return joined(format!("{sign}∞"), "");
    }
    if value == 0.0 {
        return joined("0".to_string(), "");
    }
    const PREFIXES: [(f64, &str); 11] = [
        (1e12, "T"),
        (1e9, "G"),
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "µ"),
        (1e-9, "n"),
        (1e-12, "p"),
        (1e-15, "f"),
        (1e-18, "a"),
    ];
    let magnitude = value.abs();
    let (scale, prefix) = PREFIXES
        .iter()
        .copied()
        .find(|(scale, _)| magnitude >= *scale * (1.0 - 5e-4))
        .unwrap_or(PREFIXES[PREFIXES.len() - 1]);
    let mantissa = value / scale;
    joined(three_significant(mantissa), prefix)
}

/// A mantissa in [1, 1000) with three significant digits.
fn three_significant(mantissa: f64) -> String {
    let magnitude = mantissa.abs();
    let decimals = if magnitude >= 99.95 {
        0
    } else if magnitude >= 9.995 {
        1
    } else {
        2
    };
    format!("{mantissa:.decimals$}")
}

/// Format a value of `dimension` as the budget file would write it: a
/// fraction as `%` or `ppm`, a temperature coefficient (1/K inside the
/// program) in `ppm/K` with three significant digits, anything else with
/// an SI prefix and its unit.
pub fn format_quantity(value: f64, dimension: super::Dimension) -> String {
    use super::Dimension;
    match dimension {
        Dimension::Fraction => format_fraction(value),
        Dimension::TemperatureCoefficient => {
            if value == 0.0 {
                "0 ppm/K".to_string()
            } else {
                format!("{} ppm/K", significant(value * 1e6))
            }
        }
        other => format_si(value, other.symbol()),
    }
}

/// Three significant digits, in plain form.
fn significant(value: f64) -> String {
    let magnitude = value.abs();
    let digits = (2 - magnitude.log10().floor() as i32).max(0) as usize;
    format!("{value:.digits$}")
}

/// A plain number with three significant digits (scientific notation
/// outside 0.001 to 100,000), for amounts whose unit the user named (codes,
/// kilograms) and so takes no SI prefix.
pub fn format_plain(value: f64) -> String {
    if value == 0.0 {
        "0".to_string()
    } else if !value.is_finite() {
        format_si(value, "")
    } else if (1e-3..1e5).contains(&value.abs()) {
        significant(value)
    } else {
        format!("{value:.2e}")
    }
}

/// Format a decibel figure with one decimal, `∞ dB` for an infinite ratio.
pub fn format_db(db: f64) -> String {
    if db.is_infinite() && db > 0.0 {
        "∞ dB".to_string()
    } else if db.is_infinite() {
        "-∞ dB".to_string()
    } else {
        format!("{db:.1} dB")
    }
}

/// Format a share of units (a yield) as a percentage with two decimals, or
/// more where two would round a share short of all to `100.00 %` or a
/// share above none to `0.00 %`: `99.996 %`, never a false `100.00 %`.
pub fn format_share(fraction: f64) -> String {
    let percent = fraction * 100.0;
    let mut text = format!("{percent:.2}");
    for decimals in 3..=7 {
        let shown: f64 = text.parse().unwrap_or(percent);
        let misleading = (fraction < 1.0 && shown >= 100.0) || (fraction > 0.0 && shown <= 0.0);
        if !misleading {
            break;
        }
        text = format!("{percent:.decimals$}");
    }
    format!("{text} %")
}

/// Format a fraction as a percentage when it is at least 0.01 %, otherwise
/// in ppm: `0.1 %`, `25 ppm`.
pub fn format_fraction(fraction: f64) -> String {
    if fraction == 0.0 {
        "0 %".to_string()
    } else if fraction.abs() >= 1e-4 {
        let percent = fraction * 100.0;
        format!("{} %", trim_number(percent))
    } else {
        format!("{} ppm", trim_number(fraction * 1e6))
    }
}

/// Up to four significant digits, trailing zeros removed.
fn trim_number(value: f64) -> String {
    let magnitude = value.abs();
    let decimals = if magnitude >= 1000.0 {
        0
    } else if magnitude >= 100.0 {
        1
    } else if magnitude >= 10.0 {
        2
    } else {
        3
    };
    let text = format!("{value:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn issue_10_temperature_coefficients_print_in_ppm_per_kelvin() {
        use crate::quantity::Dimension;
        assert_eq!(
            format_quantity(25e-6, Dimension::TemperatureCoefficient),
            "25.0 ppm/K"
        );
        assert_eq!(
            format_quantity(2e-6, Dimension::TemperatureCoefficient),
            "2.00 ppm/K"
        );
        assert_eq!(
            format_quantity(49.99999999999999e-6, Dimension::TemperatureCoefficient),
            "50.0 ppm/K"
        );
        assert_eq!(format_quantity(1e-3, Dimension::Fraction), "0.1 %");
        assert_eq!(format_quantity(10e3, Dimension::Resistance), "10.0 kΩ");
    }

    #[test]
    fn shares_never_round_to_all_or_none() {
        assert_eq!(format_share(1.0), "100.00 %");
        assert_eq!(format_share(0.0), "0.00 %");
        assert_eq!(format_share(0.64), "64.00 %");
        assert_eq!(format_share(0.99996), "99.996 %");
        assert_eq!(format_share(0.9999996), "99.99996 %");
        assert_eq!(format_share(3e-7), "0.00003 %");
    }

    #[test]
    fn picks_the_prefix() {
        assert_eq!(format_si(10e3, "Ω"), "10.0 kΩ");
        assert_eq!(format_si(4.7e-9, "F"), "4.70 nF");
        assert_eq!(format_si(350.0, "Ω"), "350 Ω");
        assert_eq!(format_si(12.34e-6, "V"), "12.3 µV");
        assert_eq!(format_si(0.0, "V"), "0 V");
        assert_eq!(format_si(f64::INFINITY, "Ω"), "∞ Ω");
        assert_eq!(format_si(50.0, "Hz"), "50.0 Hz");
        assert_eq!(format_si(999.96, "Hz"), "1.00 kHz");
        assert_eq!(format_si(-2.5, "V"), "-2.50 V");
    }

    #[test]
    fn decibels_and_fractions() {
        assert_eq!(format_db(80.04), "80.0 dB");
        assert_eq!(format_db(f64::INFINITY), "∞ dB");
        assert_eq!(format_fraction(1e-3), "0.1 %");
        assert_eq!(format_fraction(25e-6), "25 ppm");
        assert_eq!(format_fraction(0.05), "5 %");
    }
}
