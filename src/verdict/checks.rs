//! Requirement checks: minimum CMRR at a frequency, maximum error per
//! source, and the outcome with its margin.
//!
//! An error check compares like with like. The error a source leaves has
//! the source's own waveform (a constant for a DC source, a sinusoid at the
//! source's frequency otherwise), so it is expressed in the limit's form
//! before it is compared: a DC error's rms and peak are its magnitude; a
//! sinusoid converts exactly (pk = √2 rms, pp = 2 pk); a fraction of full
//! scale is compared with the error's peak. Validation refuses the one pair
//! that means nothing, a peak-to-peak limit on a DC source.

use super::{Check, CheckKind, Db, RequirementOutcome};
use crate::model::{describe_volts, Amplitude, ErrorLimit, Judgement, Requirement};
use crate::quantity::{format_db, format_fraction, format_si};

/// Two frequencies closer than this (relative) are the same point.
const SAME_FREQUENCY: f64 = 1e-9;

/// Whether two frequencies are the same analysis point.
pub(crate) fn same_frequency(a: f64, b: f64) -> bool {
    (a - b).abs() <= SAME_FREQUENCY * a.abs().max(b.abs()).max(1.0)
}

pub(super) fn outcome(
    requirement: Option<&Requirement>,
    checks: Vec<Check>,
) -> Option<RequirementOutcome> {
    if checks.is_empty() {
        return None;
    }
    let margin = checks
        .iter()
        .map(|c| c.margin_db)
        .min_by(|a, b| a.0.total_cmp(&b.0))?;
    let allowed = checks
        .iter()
        .map(|c| c.allowed_cmrr_db)
        .max_by(|a, b| a.0.total_cmp(&b.0))?;
    Some(RequirementOutcome {
        met: checks.iter().all(|c| c.met),
        margin_db: margin,
        allowed_cmrr_db: allowed,
        judged_on: judged_on(requirement),
        checks,
    })
}

/// The total a requirement is judged on: as the requirement says, or the
/// worst case when a source sets its own limit and there is no requirement
/// section.
pub fn judged_on(requirement: Option<&Requirement>) -> Judgement {
    requirement.map_or(Judgement::WorstCase, |r| r.judged_on)
}

/// The minimum-CMRR checks at `freq`, against the judged CMRR.
pub(super) fn cmrr_checks(requirement: &Requirement, freq: f64, achieved: Db) -> Vec<Check> {
    requirement
        .min_cmrr
        .iter()
        .filter(|m| same_frequency(m.frequency_hz, freq))
        .map(|m| {
            let margin = Db(achieved.0 - m.cmrr_db);
            Check {
                kind: CheckKind::MinimumCmrr {
                    minimum_db: Db(m.cmrr_db),
                },
                limit: format!(
                    "CMRR ≥ {} at {}",
                    format_db(m.cmrr_db),
                    format_si(freq, "Hz")
                ),
                achieved: format!("CMRR {}", format_db(achieved.0)),
                margin_db: margin,
                allowed_cmrr_db: Db(m.cmrr_db),
                met: margin.0 >= 0.0,
            }
        })
        .collect()
}

/// Compare the error that `source` leaves through a conversion of
/// magnitude `conversion` with its limit, in the limit's form.
pub(super) fn error_check(
    name: &str,
    limit: &ErrorLimit,
    source: &Amplitude,
    conversion: f64,
) -> Check {
    // Validation has refused the pairs of forms with no meaning, so the
    // allowance exists; a NaN would fail the check rather than pass it.
    let allowed = limit.allowed_conversion(source).unwrap_or(f64::NAN);
    let margin = if conversion == 0.0 {
        Db(f64::INFINITY)
    } else {
        Db(20.0 * (allowed / conversion).log10())
    };
    let error = Amplitude {
        volts: conversion * source.volts,
        form: source.form,
    };
    let (limit_text, achieved) = match limit {
        ErrorLimit::Volts(amplitude) => (
            format!("error RTI ≤ {}", amplitude.describe()),
            format!(
                "error RTI {}",
                describe_volts(
                    error.in_form(amplitude.form).unwrap_or(f64::NAN),
                    amplitude.form
                )
            ),
        ),
        ErrorLimit::OfFullScale {
            fraction,
            full_scale_volts,
        } => (
            format!(
                "peak error RTI ≤ {} of {} full scale",
                format_fraction(*fraction),
                format_si(*full_scale_volts, "V")
            ),
            format!(
                "peak error RTI {} of full scale",
                format_fraction(error.peak_volts() / full_scale_volts)
            ),
        ),
        ErrorLimit::OfReading {
            fraction,
            reading_volts,
        } => (
            format!(
                "peak error RTI ≤ {} of the {} reading",
                format_fraction(*fraction),
                format_si(*reading_volts, "V")
            ),
            format!(
                "peak error RTI {} of the reading",
                format_fraction(error.peak_volts() / reading_volts)
            ),
        ),
    };
    Check {
        kind: CheckKind::MaximumError {
            source: name.to_string(),
        },
        limit: limit_text,
        achieved,
        margin_db: margin,
        allowed_cmrr_db: Db::from_conversion(allowed),
        met: margin.0 >= 0.0,
    }
}
