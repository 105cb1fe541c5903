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
use crate::quantity::{format_db, format_fraction, format_plain, format_si, AmplitudeForm};

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

/// How an error is read at the end of the chain: one converter code
/// referred to the input (for limits in codes), the digital filter's worst
/// gain at the source's frequency (1 without a filter, or at DC), and the
/// measurand's unit (for limits in it).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct ReadingScale<'a> {
    /// One code, volts referred to the input; `None` without a converter.
    pub volts_per_code: Option<f64>,
    /// `|H|` of the converter's digital filter, worst over the source's
    /// band; `None` where no filter acts.
    pub filter_gain: Option<f64>,
    /// Whether the error judged is what a tare leaves.
    pub tared: bool,
    /// The measurand's unit, when the budget names one.
    pub unit: &'a str,
}

impl ReadingScale<'_> {
    /// The factor from the error at the converter's input to the error in
    /// the reading.
    pub fn gain(&self) -> f64 {
        self.filter_gain.unwrap_or(1.0)
    }

    /// The largest analog conversion `|ε|` that keeps `source`'s error in
    /// the reading within `limit`; `None` where the limit's form means
    /// nothing for the source.
    pub fn allowed_conversion(&self, limit: &ErrorLimit, source: &Amplitude) -> Option<f64> {
        Some(limit.allowed_conversion(source, self.volts_per_code)? / self.gain())
    }
}

/// Compare the error that `source` leaves in the reading through an analog
/// conversion of magnitude `conversion` with its limit, in the limit's
/// form and units.
pub(super) fn error_check(
    name: &str,
    limit: &ErrorLimit,
    source: &Amplitude,
    conversion: f64,
    scale: &ReadingScale,
) -> Check {
    // Validation has refused the pairs of forms with no meaning, so the
    // allowance exists; a NaN would fail the check rather than pass it.
    let allowed = scale.allowed_conversion(limit, source).unwrap_or(f64::NAN);
    let margin = if conversion == 0.0 {
        Db(f64::INFINITY)
    } else {
        Db(20.0 * (allowed / conversion).log10())
    };
    let error = Amplitude {
        volts: conversion * scale.gain() * source.volts,
        form: source.form,
    };
    let filtered = match (scale.filter_gain.is_some(), scale.tared) {
        (true, _) => " after the digital filter",
        (false, true) => " after tare",
        (false, false) => "",
    };
    let (limit_text, achieved) = match limit {
        ErrorLimit::Volts(amplitude) => (
            format!("error RTI{filtered} ≤ {}", amplitude.describe()),
            format!(
                "error RTI{filtered} {}",
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
                "peak error RTI{filtered} ≤ {} of {} full scale",
                format_fraction(*fraction),
                format_si(*full_scale_volts, "V")
            ),
            format!(
                "peak error RTI{filtered} {} of full scale",
                format_fraction(error.peak_volts() / full_scale_volts)
            ),
        ),
        ErrorLimit::OfReading {
            fraction,
            reading_volts,
        } => (
            format!(
                "peak error RTI{filtered} ≤ {} of the {} reading",
                format_fraction(*fraction),
                format_si(*reading_volts, "V")
            ),
            format!(
                "peak error RTI{filtered} {} of the reading",
                format_fraction(error.peak_volts() / reading_volts)
            ),
        ),
        ErrorLimit::Codes { codes, .. } => {
            let form = limit.form();
            let per_code = scale.volts_per_code.unwrap_or(f64::NAN);
            let read = error.in_form(form).unwrap_or(f64::NAN) / per_code;
            let what = form_word(form);
            (
                format!(
                    "{what} error{filtered} ≤ {} LSB ({} RTI per code)",
                    format_plain(*codes),
                    format_si(per_code, "V")
                ),
                format!("{what} error{filtered} {} LSB", format_plain(read)),
            )
        }
        ErrorLimit::InMeasurand {
            amount,
            volts_per_unit,
            ..
        } => {
            let form = limit.form();
            let read = error.in_form(form).unwrap_or(f64::NAN) / volts_per_unit;
            let what = form_word(form);
            let unit = scale.unit;
            (
                format!("{what} error{filtered} ≤ {} {unit}", format_plain(*amount)),
                format!("{what} error{filtered} {} {unit}", format_plain(read)),
            )
        }
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

/// `peak`, `rms` or `peak-to-peak`, for a limit in codes or units.
fn form_word(form: Option<AmplitudeForm>) -> &'static str {
    match form {
        Some(AmplitudeForm::Rms) => "rms",
        Some(AmplitudeForm::PeakToPeak) => "peak-to-peak",
        _ => "peak",
    }
}
