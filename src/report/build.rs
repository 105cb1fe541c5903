//! Building the report from a validated budget.

use super::cautions::cautions;
use super::{
    Check, ContributionKind, ContributionRow, Corner, Db, FrequencyResult, Report,
    RequirementOutcome, SourceResult, Totals, Verdict, SCHEMA_VERSION,
};
use crate::engine::{analyse_point, EngineError, PointAnalysis};
use crate::model::describe_volts;
use crate::model::{
    Amplitude, Budget, ErrorLimit, Interference, Parameter, Presentation, Requirement, Variation,
};
use crate::quantity::{format_db, format_fraction, format_si, Dimension};
use crate::stage::{OpAmp, StageKind};

/// Two frequencies closer than this (relative) are the same point.
const SAME_FREQUENCY: f64 = 1e-9;

fn same_frequency(a: f64, b: f64) -> bool {
    (a - b).abs() <= SAME_FREQUENCY * a.abs().max(b.abs()).max(1.0)
}

/// Analyse `budget` at every frequency it names and assemble the report.
pub fn build_report(budget: &Budget) -> Result<Report, EngineError> {
    let mut analyses: Vec<PointAnalysis> = Vec::new();
    let mut analysis_at = |freq: f64| -> Result<PointAnalysis, EngineError> {
        if let Some(found) = analyses.iter().find(|a| same_frequency(a.freq_hz, freq)) {
            return Ok(found.clone());
        }
        let analysis = analyse_point(budget, freq)?;
        analyses.push(analysis.clone());
        Ok(analysis)
    };
    let requirement = budget.requirement.as_ref();
    let mut results = Vec::new();
    for source in &budget.interference {
        let analysis = analysis_at(source.frequency_hz)?;
        results.push(source_result(budget, source, &analysis, requirement));
    }
    let mut extra: Vec<f64> = requirement
        .map(|r| r.min_cmrr.iter().map(|m| m.frequency_hz).collect())
        .unwrap_or_default();
    extra.extend(&budget.extra_frequencies_hz);
    let mut frequencies: Vec<FrequencyResult> = Vec::new();
    for freq in extra {
        let covered = budget
            .interference
            .iter()
            .any(|s| same_frequency(s.frequency_hz, freq))
            || frequencies
                .iter()
                .any(|f| same_frequency(f.frequency_hz, freq));
        if covered {
            continue;
        }
        let analysis = analysis_at(freq)?;
        frequencies.push(frequency_result(budget, &analysis, requirement));
    }
    frequencies.sort_by(|a, b| a.frequency_hz.total_cmp(&b.frequency_hz));
    let margins: Vec<Db> = results
        .iter()
        .filter_map(|r| r.requirement.as_ref())
        .chain(frequencies.iter().filter_map(|f| f.requirement.as_ref()))
        .map(|o| o.margin_db)
        .collect();
    let verdict = Verdict {
        met: (!margins.is_empty()).then(|| margins.iter().all(|m| m.0 >= 0.0)),
        margin_db: margins.iter().copied().min_by(|a, b| a.0.total_cmp(&b.0)),
    };
    Ok(Report {
        schema_version: SCHEMA_VERSION,
        budget: budget.name.clone(),
        notes: budget.notes.clone(),
        cautions: cautions(budget),
        remarks: remarks(budget),
        results,
        frequencies,
        verdict,
    })
}

/// Contribution rows, largest first, with the error each leaves when an
/// amplitude is given (volts in the amplitude's own form).
fn contribution_rows(
    budget: &Budget,
    analysis: &PointAnalysis,
    amplitude: Option<&Amplitude>,
) -> Vec<ContributionRow> {
    let worst = analysis.worst_case();
    let share = |magnitude: f64| if worst > 0.0 { magnitude / worst } else { 0.0 };
    let mut rows = Vec::new();
    let nominal = analysis.nominal_magnitude();
    if nominal > 0.0 {
        rows.push(ContributionRow {
            name: "nominal imbalance".into(),
            stage: "whole chain".into(),
            value: "values as given".into(),
            field: String::new(),
            kind: ContributionKind::Systematic,
            cmrr_db: Db::from_conversion(nominal),
            error_rti_v: amplitude.map(|a| nominal * a.volts),
            share: share(nominal),
        });
    }
    for contribution in &analysis.contributions {
        let parameter = budget.parameters.get(contribution.param);
        let magnitude = contribution.magnitude();
        rows.push(ContributionRow {
            name: parameter.name.clone(),
            stage: budget.chain[parameter.stage].label.clone(),
            value: parameter.describe(),
            field: parameter.field.clone(),
            kind: ContributionKind::Random,
            cmrr_db: Db::from_conversion(magnitude),
            error_rti_v: amplitude.map(|a| magnitude * a.volts),
            share: share(magnitude),
        });
    }
    rows.sort_by(|a, b| b.share.total_cmp(&a.share));
    rows
}

fn conversion_totals(analysis: &PointAnalysis) -> Totals<f64> {
    Totals {
        worst_case: analysis.worst_case(),
        rss: analysis.rss(),
        nominal: analysis.nominal_magnitude(),
    }
}

fn corner(analysis: &PointAnalysis) -> Corner {
    let worst = analysis.worst_case();
    let interaction = analysis.interaction_magnitude();
    Corner {
        cmrr_db: Db::from_conversion(analysis.corner_magnitude()),
        interaction,
        interaction_share: if worst > 0.0 {
            interaction / worst
        } else {
            0.0
        },
    }
}

fn source_result(
    budget: &Budget,
    source: &Interference,
    analysis: &PointAnalysis,
    requirement: Option<&Requirement>,
) -> SourceResult {
    let conversion = conversion_totals(analysis);
    let gain = analysis.differential_gain.norm();
    let cmrr_db = conversion.map(Db::from_conversion);
    let error_rti_v = conversion.map(|e| e * source.amplitude.volts);
    let error_fs_ppm = requirement
        .and_then(|r| r.full_scale_volts)
        .map(|fs| conversion.map(|e| e * source.amplitude.peak_volts() / fs * 1e6));
    let mut checks = requirement
        .map(|r| cmrr_checks(r, source.frequency_hz, &cmrr_db))
        .unwrap_or_default();
    if let (Some(requirement), Some(limit)) = (
        requirement,
        source.max_error.or(requirement.and_then(|r| r.max_error)),
    ) {
        let judged = conversion.judged(requirement.judged_on);
        checks.push(error_check(&limit, judged * source.amplitude.peak_volts()));
    }
    SourceResult {
        source: source.name.clone(),
        frequency_hz: source.frequency_hz,
        amplitude_v: source.amplitude.volts,
        amplitude_form: source.amplitude.form,
        differential_gain: gain,
        cmrr_db,
        error_rti_v,
        error_rto_v: error_rti_v.map(|e| e * gain),
        error_fs_ppm,
        corner: corner(analysis),
        contributions: contribution_rows(budget, analysis, Some(&source.amplitude)),
        requirement: outcome(requirement, checks),
    }
}

fn frequency_result(
    budget: &Budget,
    analysis: &PointAnalysis,
    requirement: Option<&Requirement>,
) -> FrequencyResult {
    let cmrr_db = conversion_totals(analysis).map(Db::from_conversion);
    let checks = requirement
        .map(|r| cmrr_checks(r, analysis.freq_hz, &cmrr_db))
        .unwrap_or_default();
    FrequencyResult {
        frequency_hz: analysis.freq_hz,
        differential_gain: analysis.differential_gain.norm(),
        cmrr_db,
        corner: corner(analysis),
        contributions: contribution_rows(budget, analysis, None),
        requirement: outcome(requirement, checks),
    }
}

fn outcome(requirement: Option<&Requirement>, checks: Vec<Check>) -> Option<RequirementOutcome> {
    let requirement = requirement?;
    if checks.is_empty() {
        return None;
    }
    let margin = checks
        .iter()
        .map(|c| c.margin_db)
        .min_by(|a, b| a.0.total_cmp(&b.0))?;
    Some(RequirementOutcome {
        met: checks.iter().all(|c| c.met),
        margin_db: margin,
        judged_on: requirement.judged_on,
        checks,
    })
}

fn cmrr_checks(requirement: &Requirement, freq: f64, cmrr_db: &Totals<Db>) -> Vec<Check> {
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
                met: margin.0 >= 0.0,
            }
        })
        .collect()
}

/// Compare an error (peak volts, referred to the input) with its limit.
fn error_check(limit: &ErrorLimit, error_peak: f64) -> Check {
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
        met: margin.0 >= 0.0,
    }
}

/// How the budget was read where the file left something out.
fn remarks(budget: &Budget) -> Vec<String> {
    let mut remarks = Vec::new();
    for stage in &budget.chain {
        let opamps: Vec<(&str, &OpAmp)> = match &stage.kind {
            StageKind::DifferenceAmp(amp) => vec![("op-amp", &amp.opamp)],
            StageKind::ThreeOpAmpInAmp(amp) => vec![
                ("A1", &amp.first_stage[0]),
                ("A2", &amp.first_stage[1]),
                ("A3", &amp.difference_stage.opamp),
            ],
            StageKind::IntegratedInAmp(amp) if amp.cmrr_reciprocal.is_none() => {
                remarks.push(format!(
                    "{}: no CMRR given, so the in-amp's own CMRR is taken as infinite",
                    stage.label
                ));
                Vec::new()
            }
            _ => Vec::new(),
        };
        for (who, opamp) in opamps {
            let mut ideal = Vec::new();
            if opamp.open_loop_gain.is_none() {
                ideal.push("infinite open-loop gain");
            }
            if opamp.gain_bandwidth_hz.is_none() {
                ideal.push("infinite gain-bandwidth");
            }
            if opamp.cmrr_reciprocal.is_none() {
                ideal.push("infinite CMRR");
            }
            if !ideal.is_empty() {
                remarks.push(format!(
                    "{}: {who} taken as ideal in: {}",
                    stage.label,
                    ideal.join(", ")
                ));
            }
        }
    }
    let exact: Vec<String> = budget
        .parameters
        .iter()
        .filter(|(_, p)| p.variation == Variation::Fixed && is_component(p))
        .map(|(_, p)| format!("{} ({})", p.name, budget.chain[p.stage].label))
        .collect();
    if !exact.is_empty() {
        remarks.push(format!(
            "taken as exact (no tolerance given): {}",
            exact.join(", ")
        ));
    }
    remarks
}

/// Resistors and capacitors: parts whose tolerance a user normally states.
fn is_component(parameter: &Parameter) -> bool {
    matches!(
        parameter.presentation,
        Presentation::Value(Dimension::Resistance | Dimension::Capacitance)
    )
}
