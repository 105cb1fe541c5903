//! Building the report from a validated budget.

use super::cautions::cautions;
use super::checks::{cmrr_checks, error_check, judged_on, outcome, same_frequency};
use super::facts::{facts, remarks};
use super::{
    ContributionKind, ContributionRow, Corner, Db, FrequencyResult, Report, SourceResult,
    TemperatureResult, Totals, Verdict, SCHEMA_VERSION,
};
use crate::engine::{analyse_point_at, check_headroom, EngineError, PointAnalysis};
use crate::model::{Amplitude, Budget, Interference, Presentation, Requirement};
use crate::quantity::Dimension;
use crate::stage::StageKind;

/// The analyses at one frequency: at the reference temperature, and at the
/// worse end of the temperature range when there is one.
#[derive(Debug, Clone)]
struct Analyses {
    reference: PointAnalysis,
    worse_end: Option<(f64, PointAnalysis)>,
}

impl Analyses {
    fn new(budget: &Budget, freq_hz: f64) -> Result<Analyses, EngineError> {
        let reference = analyse_point_at(budget, freq_hz, 0.0)?;
        let worse_end = match budget.temperature {
            Some(range) => {
                let [cold, hot] = range.excursions();
                let cold_analysis = analyse_point_at(budget, freq_hz, cold)?;
                let hot_analysis = analyse_point_at(budget, freq_hz, hot)?;
                Some(if hot_analysis.worst_case() >= cold_analysis.worst_case() {
                    (range.high_k, hot_analysis)
                } else {
                    (range.low_k, cold_analysis)
                })
            }
            None => None,
        };
        Ok(Analyses {
            reference,
            worse_end,
        })
    }

    /// The conversion totals a requirement is judged on: the worse of the
    /// reference temperature and the worse end of the range.
    fn judged_conversion(&self) -> Totals<f64> {
        let reference = conversion_totals(&self.reference);
        match &self.worse_end {
            Some((_, hot)) => {
                let hot = conversion_totals(hot);
                Totals {
                    worst_case: reference.worst_case.max(hot.worst_case),
                    rss: reference.rss.max(hot.rss),
                    nominal: reference.nominal.max(hot.nominal),
                }
            }
            None => reference,
        }
    }
}

/// Analyse `budget` at every frequency it names and assemble the report.
pub fn build_report(budget: &Budget) -> Result<Report, EngineError> {
    let mut cache: Vec<(f64, Analyses)> = Vec::new();
    let mut analyses_at = |freq: f64| -> Result<Analyses, EngineError> {
        if let Some((_, found)) = cache.iter().find(|(f, _)| same_frequency(*f, freq)) {
            return Ok(found.clone());
        }
        let analyses = Analyses::new(budget, freq)?;
        cache.push((freq, analyses.clone()));
        Ok(analyses)
    };
    let requirement = budget.requirement.as_ref();
    let mut results = Vec::new();
    for source in &budget.interference {
        let analyses = analyses_at(source.frequency_hz)?;
        results.push(source_result(budget, source, &analyses, requirement));
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
        let analyses = analyses_at(freq)?;
        frequencies.push(frequency_result(budget, &analyses, requirement));
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
        facts: facts(budget),
        measurand_unit: budget.measurand.as_ref().map(|m| m.unit.clone()),
        headroom: check_headroom(budget)?,
        results,
        frequencies,
        verdict,
    })
}

/// Contribution rows, largest first, with the error each leaves when an
/// amplitude is given (volts in the amplitude's own form). Temperature
/// coefficients that contribute nothing (at the reference temperature) are
/// left out.
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
        let is_drift =
            parameter.presentation == Presentation::Value(Dimension::TemperatureCoefficient);
        if is_drift && magnitude == 0.0 {
            continue;
        }
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

fn temperature_result(
    budget: &Budget,
    analyses: &Analyses,
    amplitude: Option<&Amplitude>,
) -> Option<TemperatureResult> {
    let (temperature_k, analysis) = analyses.worse_end.as_ref()?;
    let conversion = conversion_totals(analysis);
    Some(TemperatureResult {
        temperature_k: *temperature_k,
        cmrr_db: conversion.map(Db::from_conversion),
        error_rti_v: amplitude.map(|a| conversion.map(|e| e * a.volts)),
        corner: corner(analysis),
        contributions: contribution_rows(budget, analysis, amplitude),
    })
}

/// The converter's LSB, when the chain ends in one.
fn lsb_volts(budget: &Budget) -> Option<f64> {
    match budget.chain.last().map(|s| &s.kind) {
        Some(StageKind::Adc(adc)) => Some(adc.lsb_volts()),
        _ => None,
    }
}

fn source_result(
    budget: &Budget,
    source: &Interference,
    analyses: &Analyses,
    requirement: Option<&Requirement>,
) -> SourceResult {
    let analysis = &analyses.reference;
    let conversion = conversion_totals(analysis);
    let gain = analysis.differential_gain.norm();
    let cmrr_db = conversion.map(Db::from_conversion);
    let error_rti_v = conversion.map(|e| e * source.amplitude.volts);
    let error_fs_ppm = requirement
        .and_then(|r| r.full_scale_volts)
        .map(|fs| conversion.map(|e| e * source.amplitude.peak_volts() / fs * 1e6));
    let judged = analyses.judged_conversion();
    let mut checks = requirement
        .map(|r| cmrr_checks(r, source.frequency_hz, &judged.map(Db::from_conversion)))
        .unwrap_or_default();
    if let Some(limit) = source.max_error.or(requirement.and_then(|r| r.max_error)) {
        checks.push(error_check(
            &limit,
            judged.judged(judged_on(requirement)) * source.amplitude.peak_volts(),
            source.amplitude.peak_volts(),
        ));
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
        error_lsb: lsb_volts(budget).map(|lsb| error_rti_v.map(|e| e * gain / lsb)),
        error_measurand: budget
            .measurand
            .as_ref()
            .map(|m| error_rti_v.map(|e| e / m.volts_per_unit)),
        contributions: contribution_rows(budget, analysis, Some(&source.amplitude)),
        at_temperature: temperature_result(budget, analyses, Some(&source.amplitude)),
        requirement: outcome(requirement, checks),
    }
}

fn frequency_result(
    budget: &Budget,
    analyses: &Analyses,
    requirement: Option<&Requirement>,
) -> FrequencyResult {
    let analysis = &analyses.reference;
    let cmrr_db = conversion_totals(analysis).map(Db::from_conversion);
    let judged = analyses.judged_conversion().map(Db::from_conversion);
    let checks = requirement
        .map(|r| cmrr_checks(r, analysis.freq_hz, &judged))
        .unwrap_or_default();
    FrequencyResult {
        frequency_hz: analysis.freq_hz,
        differential_gain: analysis.differential_gain.norm(),
        cmrr_db,
        corner: corner(analysis),
        contributions: contribution_rows(budget, analysis, None),
        at_temperature: temperature_result(budget, analyses, None),
        requirement: outcome(requirement, checks),
    }
}
