//! Requirement checks: minimum CMRR at a frequency, maximum error per
//! source, and the outcome with its margin.

use super::{Check, Db, RequirementOutcome, Totals};
use crate::model::{describe_volts, Amplitude, ErrorLimit, Judgement, Requirement};
use crate::quantity::{format_db, format_fraction, format_si};

/// Two frequencies closer than this (relative) are the same point.
const SAME_FREQUENCY: f64 = 1e-9;

/// Whether two frequencies are the same analysis point.
pub(super) fn same_frequency(a: f64, b: f64) -> bool {
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
pub(super) fn judged_on(requirement: Option<&Requirement>) -> Judgement {
    requirement.map_or(Judgement::WorstCase, |r| r.judged_on)
}

pub(super) fn cmrr_checks(
    requirement: &Requirement,
    freq: f64,
    cmrr_db: &Totals<Db>,
) -> Vec<Check> {
    let achieved = cmrr_db.judged(requirement.judged_on);
    requirement
        .min_cmrr
        .iter()
        .filter(|m| same_frequency(m.frequency_hz, freq))
        .map(|m| {
            let margin = Db(achieved.0 - m.cmrr_db);
            Check {
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

/// Compare an error (peak volts, referred to the input) with its limit,
/// for a source of peak common mode `source_peak`.
pub(super) fn error_check(limit: &ErrorLimit, error_peak: f64, source_peak: f64) -> Check {
    let limit_peak = limit.peak_volts();
    let margin = if error_peak == 0.0 {
        Db(f64::INFINITY)
    } else {
        Db(20.0 * (limit_peak / error_peak).log10())
    };
    let (limit_text, achieved) = match limit {
        ErrorLimit::Volts(amplitude) => {
            let error = Amplitude {
                volts: error_peak,
                form: None,
            }
            .volts_in(amplitude.form);
            (
                format!("error RTI ≤ {}", amplitude.describe()),
                format!("error RTI {}", describe_volts(error, amplitude.form)),
            )
        }
        ErrorLimit::OfFullScale {
            fraction,
            full_scale_volts,
        } => (
            format!(
                "error RTI ≤ {} of {} full scale",
                format_fraction(*fraction),
                format_si(*full_scale_volts, "V")
            ),
            format!(
                "error RTI {} of full scale",
                format_fraction(error_peak / full_scale_volts)
            ),
        ),
    };
    Check {
        limit: limit_text,
        achieved,
        margin_db: margin,
        allowed_cmrr_db: Db::from_conversion(limit_peak / source_peak),
        met: margin.0 >= 0.0,
    }
}
