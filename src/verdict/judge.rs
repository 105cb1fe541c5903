//! Judging a validated budget: the analyses at every frequency it names
//! and temperature it covers, the headroom check, the requirement checks
//! and the verdict.

use super::cautions::cautions;
use super::checks::{cmrr_checks, error_check, judged_on, outcome, same_frequency, ReadingScale};
use super::facts::{facts, remarks};
use super::{
    ContributionKind, ContributionRow, Corner, CornerValue, Db, FilteredError, FrequencyResult,
    JudgedFigure, Report, SourceResult, Status, TemperatureResult, Totals, Verdict, SCHEMA_VERSION,
};
use crate::engine::{
    analyse_point_at, check_headroom, nominal_differential_gain, ranking_key, tare_residual,
    worst_corners, CornerSearch, EngineError, PointAnalysis, TareResidual,
};
use crate::model::{Amplitude, Budget, Interference, Judgement, Presentation, Requirement};
use crate::quantity::{format_db, format_quantity, Dimension};
use crate::stage::StageKind;

/// Why a budget cannot be judged.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum VerdictError {
    /// The chain failed to solve.
    #[error(transparent)]
    Engine(#[from] EngineError),
    /// An end of the temperature range was asked for, and the budget has
    /// none.
    #[error("the budget has no temperature range, so it can only be judged at the reference temperature; add `temperature: {{reference: …, range: […, …]}}`")]
    NoTemperatureRange,
}

/// Where the operating temperature is taken for a judgement.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Operating {
    /// The reference temperature and both ends of the budget's range (the
    /// worse end judged); the reference alone without a range. What
    /// `cmrr budget` judges.
    #[default]
    OverRange,
    /// The reference temperature only.
    Reference,
    /// The cold end of the range only.
    Cold,
    /// The hot end of the range only.
    Hot,
}

impl Operating {
    /// The temperature excursion (K from the reference) the figures are
    /// shown at: zero for the reference and over the range, an end's for
    /// an end.
    pub fn shown_excursion(self, budget: &Budget) -> Result<f64, VerdictError> {
        Ok(self.excursions(budget)?.0)
    }

    /// The temperature excursion the figures are shown at, and the ends
    /// (excursion, kelvin) judged beside it.
    pub(super) fn excursions(
        self,
        budget: &Budget,
    ) -> Result<(f64, Vec<(f64, f64)>), VerdictError> {
        let range = budget.temperature;
        match (self, range) {
            (Operating::OverRange, Some(r)) => {
                let [cold, hot] = r.excursions();
                Ok((0.0, vec![(cold, r.low_k), (hot, r.high_k)]))
            }
            (Operating::OverRange | Operating::Reference, _) => Ok((0.0, Vec::new())),
            (Operating::Cold, Some(r)) => Ok((r.low_k - r.reference_k, Vec::new())),
            (Operating::Hot, Some(r)) => Ok((r.high_k - r.reference_k, Vec::new())),
            (Operating::Cold | Operating::Hot, None) => Err(VerdictError::NoTemperatureRange),
        }
    }
}

/// One point analysed and its worst corner searched.
#[derive(Debug, Clone)]
struct Analysed {
    analysis: PointAnalysis,
    corner: CornerSearch,
}

/// Every frequency of `frequencies` analysed `delta_t` from the reference,
/// the worst corners searched together.
fn analysed_at(
    budget: &Budget,
    frequencies: &[f64],
    delta_t: f64,
) -> Result<Vec<Analysed>, EngineError> {
    let analyses = frequencies
        .iter()
        .map(|&freq| analyse_point_at(budget, freq, delta_t))
        .collect::<Result<Vec<_>, _>>()?;
    let corners = worst_corners(budget, &analyses.iter().collect::<Vec<_>>())?;
    Ok(analyses
        .into_iter()
        .zip(corners)
        .map(|(analysis, corner)| Analysed { analysis, corner })
        .collect())
}

/// The analyses at one frequency: where the figures are shown, and the
/// worse end of the temperature range when it is judged too.
#[derive(Debug, Clone)]
struct Analyses {
    shown: Analysed,
    /// The temperature of `shown`, kelvin; `None` at the reference.
    shown_k: Option<f64>,
    worse_end: Option<(f64, Analysed)>,
    /// Every end of the range judged, kelvin and analysis (a tared
    /// source's residual is worst at its own end).
    ends: Vec<(f64, Analysed)>,
}

impl Analyses {
    /// From the analysis where the figures are shown (at `shown_k`, none
    /// at the reference) and those at the ends of the range (each with its
    /// kelvin), keeping the worse end.
    fn assemble(
        shown: Analysed,
        shown_k: Option<f64>,
        ends: Vec<(f64, Analysed)>,
        judgement: Judgement,
    ) -> Analyses {
        let mut worse_end: Option<(f64, Analysed)> = None;
        let all = ends.clone();
        for (kelvin, analysis) in ends {
            let worse = worse_end.as_ref().is_none_or(|(_, w)| {
                conversion_totals(&analysis).judged(judgement)
                    > conversion_totals(w).judged(judgement)
            });
            if worse {
                worse_end = Some((kelvin, analysis));
            }
        }
        Analyses {
            shown,
            shown_k,
            worse_end,
            ends: all,
        }
    }

    /// The judged conversion and where it is worst: the worse of the
    /// figures shown and the worse end of the range.
    fn judged(&self, judgement: Judgement) -> (Option<f64>, f64) {
        let shown = conversion_totals(&self.shown).judged(judgement);
        match &self.worse_end {
            Some((kelvin, end)) if conversion_totals(end).judged(judgement) > shown => {
                (Some(*kelvin), conversion_totals(end).judged(judgement))
            }
            _ => (self.shown_k, shown),
        }
    }
}

/// Judge `budget` as `cmrr budget` does: over its temperature range.
pub fn judge(budget: &Budget) -> Result<Report, VerdictError> {
    judge_with(budget, Operating::OverRange)
}

/// Judge `budget` at every frequency it names, the temperature taken as
/// `operating` says, and assemble the report.
pub fn judge_with(budget: &Budget, operating: Operating) -> Result<Report, VerdictError> {
    Ok(judge_in_full(budget, operating)?.0)
}

/// [`judge_with`], keeping the switching sources' residue waveforms (for
/// plots and data) beside the report.
pub fn judge_in_full(
    budget: &Budget,
    operating: Operating,
) -> Result<(Report, Vec<super::JudgedSwitching>), VerdictError> {
    let requirement = budget.requirement.as_ref();
    let judgement = judged_on(requirement);
    // Every frequency the budget names, once, in the order first named.
    let mut named: Vec<f64> = Vec::new();
    let sources = budget.interference.iter().map(|s| s.frequency_hz);
    let checked = requirement
        .into_iter()
        .flat_map(|r| r.min_cmrr.iter().map(|m| m.frequency_hz));
    for freq in sources
        .chain(checked)
        .chain(budget.extra_frequencies_hz.iter().copied())
    {
        if !named.iter().any(|&f| same_frequency(f, freq)) {
            named.push(freq);
        }
    }
    let (shown_dt, ends) = operating.excursions(budget)?;
    let shown_k = (shown_dt != 0.0)
        .then(|| budget.temperature.map(|r| r.reference_k + shown_dt))
        .flatten();
    let shown = analysed_at(budget, &named, shown_dt)?;
    let mut at_ends: Vec<(f64, std::vec::IntoIter<Analysed>)> = Vec::new();
    for (delta_t, kelvin) in ends {
        at_ends.push((kelvin, analysed_at(budget, &named, delta_t)?.into_iter()));
    }
    let cache: Vec<(f64, Analyses)> = named
        .iter()
        .zip(shown)
        .map(|(&freq, shown)| {
            let ends = at_ends
                .iter_mut()
                .map(|(kelvin, each)| (*kelvin, each.next().expect("one per frequency")))
                .collect();
            (freq, Analyses::assemble(shown, shown_k, ends, judgement))
        })
        .collect();
    let analyses_at = |freq: f64| -> &Analyses {
        &cache
            .iter()
            .find(|(f, _)| same_frequency(*f, freq))
            .expect("every named frequency analysed")
            .1
    };
    let mut results = Vec::new();
    for source in &budget.interference {
        let analyses = analyses_at(source.frequency_hz);
        results.push(source_result(budget, source, analyses, requirement)?);
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
        let analyses = analyses_at(freq);
        frequencies.push(frequency_result(budget, analyses, requirement));
    }
    frequencies.sort_by(|a, b| a.frequency_hz.total_cmp(&b.frequency_hz));
    let headroom = check_headroom(budget)?;
    let judged_switching = judge_switching_sources(budget, operating)?;
    let switching = judged_switching.iter().map(|s| s.result.clone()).collect();
    let mut report = Report {
        schema_version: SCHEMA_VERSION,
        budget: budget.name.clone(),
        notes: budget.notes.clone(),
        cautions: cautions(budget),
        remarks: remarks(budget),
        facts: facts(budget),
        measurand_unit: budget.measurand.as_ref().map(|m| m.unit.clone()),
        headroom,
        results,
        frequencies,
        switching,
        verdict: Verdict {
            status: Status::NoRequirement,
            met: None,
            margin_db: None,
            tightest: None,
        },
    };
    report.verdict = verdict(&report);
    Ok((report, judged_switching))
}

/// Every switching source of `budget` judged, the temperature taken as
/// `operating` says, with the residue waveforms for plots and data.
pub fn judge_switching_sources(
    budget: &Budget,
    operating: Operating,
) -> Result<Vec<super::JudgedSwitching>, VerdictError> {
    let (shown_dt, ends) = operating.excursions(budget)?;
    let shown_k = (shown_dt != 0.0)
        .then(|| budget.temperature.map(|r| r.reference_k + shown_dt))
        .flatten();
    let requirement = budget.requirement.as_ref();
    Ok(budget
        .switching
        .iter()
        .map(|source| {
            super::switching::judge_switching(
                budget,
                source,
                (shown_dt, shown_k),
                &ends,
                requirement,
            )
        })
        .collect::<Result<Vec<_>, _>>()?)
}

/// The verdict over every judged point and switching source; a headroom
/// finding means the figures do not hold, whatever the margins say.
fn verdict(report: &Report) -> Verdict {
    let points = report.judged_points();
    let switching = report
        .switching
        .iter()
        .filter_map(|s| s.requirement.as_ref().map(|o| (s.source.clone(), o)));
    let outcomes: Vec<(String, &super::RequirementOutcome)> = points
        .into_iter()
        .filter_map(|p| p.requirement.map(|o| (p.at, o)))
        .chain(switching)
        .collect();
    let all_met = outcomes.iter().all(|(_, o)| o.met);
    let tightest = outcomes
        .into_iter()
        .map(|(at, o)| (at, o.margin_db))
        .min_by(|a, b| a.1 .0.total_cmp(&b.1 .0));
    let holds = report.headroom.is_empty();
    let status = match (&tightest, holds) {
        (_, false) => Status::DoesNotHold,
        (None, true) => Status::NoRequirement,
        (Some(_), true) if all_met => Status::Met,
        (Some(_), true) => Status::Missed,
    };
    Verdict {
        status,
        met: match status {
            Status::Met => Some(true),
            Status::Missed | Status::DoesNotHold => Some(false),
            Status::NoRequirement => None,
        },
        margin_db: tightest.as_ref().map(|t| t.1),
        tightest: tightest.map(|t| t.0),
    }
}

/// Contribution rows, largest first, with the error each leaves when an
/// amplitude is given (volts in the amplitude's own form). Temperature
/// coefficients that contribute nothing (at the reference temperature) are
/// left out.
fn contribution_rows(
    budget: &Budget,
    analysed: &Analysed,
    amplitude: Option<&Amplitude>,
) -> Vec<ContributionRow> {
    let analysis = &analysed.analysis;
    let worst = analysis.worst_case();
    let share = |magnitude: f64| if worst > 0.0 { magnitude / worst } else { 0.0 };
    let mut rows = Vec::new();
    let nominal = analysis.nominal_magnitude();
    if nominal > 0.0 {
        rows.push(systematic_row(
            nominal,
            amplitude.map(|a| nominal * a.volts),
            share(nominal),
        ));
    }
    for contribution in &analysis.contributions {
        let parameter = budget.parameters.get(contribution.param);
        let magnitude = contribution.magnitude();
        let is_drift =
            parameter.presentation == Presentation::Value(Dimension::TemperatureCoefficient);
        if is_drift && magnitude == 0.0 {
            continue;
        }
        rows.push(parameter_row(
            budget,
            contribution.param,
            magnitude,
            amplitude.map(|a| magnitude * a.volts),
            share(magnitude),
        ));
    }
    rows.sort_by(|a, b| ranking_key(b.share).total_cmp(&ranking_key(a.share)));
    rows
}

/// The systematic row: the conversion with values as given.
fn systematic_row(conversion: f64, error_rti_v: Option<f64>, share: f64) -> ContributionRow {
    ContributionRow {
        name: "nominal imbalance".into(),
        stage: "whole chain".into(),
        value: "values as given".into(),
        field: String::new(),
        kind: ContributionKind::Systematic,
        cmrr_db: Db::from_conversion(conversion),
        error_rti_v,
        share,
    }
}

/// One varying parameter's row.
fn parameter_row(
    budget: &Budget,
    id: crate::model::ParamId,
    conversion: f64,
    error_rti_v: Option<f64>,
    share: f64,
) -> ContributionRow {
    let parameter = budget.parameters.get(id);
    ContributionRow {
        name: parameter.name.clone(),
        stage: budget.chain[parameter.stage].label.clone(),
        value: parameter.describe(),
        field: parameter.field.clone(),
        kind: ContributionKind::Random,
        cmrr_db: Db::from_conversion(conversion),
        error_rti_v,
        share,
    }
}

/// The four totals of one analysis, as conversions.
fn conversion_totals(analysed: &Analysed) -> Totals<f64> {
    let analysis = &analysed.analysis;
    Totals {
        worst_case: analysis.worst_case(),
        worst_corner: analysed.corner.magnitude(),
        rss: analysis.rss(),
        nominal: analysis.nominal_magnitude(),
    }
}

/// Below this the linear bound and the exact corner count as the same.
const SAME_DB: f64 = 0.1;

fn corner(budget: &Budget, analysed: &Analysed) -> Corner {
    let analysis = &analysed.analysis;
    let search = &analysed.corner;
    let worst = analysis.worst_case();
    let interaction = search.interaction_magnitude();
    let corner_db = Db::from_conversion(search.magnitude());
    let bound_db = Db::from_conversion(worst);
    let phase = analysis.phase_spread_deg();
    let why_they_differ = (corner_db.0 - bound_db.0 > SAME_DB).then(|| match phase {
        Some(angle) if angle >= 1.0 => format!(
            "the linear bound adds the contributions' magnitudes as if they were in phase; here the largest and another are {angle:.0}° apart, so no corner reaches the bound and the exact corner is {} better",
            format_db(corner_db.0 - bound_db.0)
        ),
        _ => format!(
            "the contributions interact: the exact corner is {} better than the linear bound",
            format_db(corner_db.0 - bound_db.0)
        ),
    });
    Corner {
        cmrr_db: corner_db,
        linear_bound_db: bound_db,
        search: if search.exhaustive {
            "exhaustive"
        } else {
            "directed"
        },
        corners_solved: search.evaluated,
        interaction,
        interaction_share: if worst > 0.0 {
            interaction / worst
        } else {
            0.0
        },
        phase_spread_deg: phase,
        why_they_differ,
        parameters: search
            .values
            .iter()
            .map(|(id, value)| corner_value(budget, *id, *value))
            .collect(),
    }
}

/// A parameter's value at a corner, with the end of its range it sits at.
pub(super) fn corner_value(budget: &Budget, id: crate::model::ParamId, value: f64) -> CornerValue {
    use crate::model::Variation;
    let p = budget.parameters.get(id);
    let sign = if value >= p.nominal { "+" } else { "−" };
    let shown = match (p.presentation, p.variation) {
        (Presentation::Value(d), Variation::Relative { tolerance }) => format!(
            "{} {sign}{}",
            format_quantity(p.nominal, d),
            crate::quantity::format_fraction(tolerance)
        ),
        (Presentation::Value(d), _) => format!("{sign}{}", format_quantity(value.abs(), d)),
        (Presentation::ReciprocalCmrr, _) => {
            format!("{} ({sign})", format_db(-20.0 * value.abs().log10()))
        }
    };
    CornerValue {
        name: p.name.clone(),
        stage: budget.chain[p.stage].label.clone(),
        value: shown,
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
        corner: corner(budget, analysis),
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

/// The judged figure of a point whose judged conversion (and where it is
/// worst) is `(temperature_k, conversion)`, from [`Analyses::judged`].
fn judged_figure(
    judgement: Judgement,
    (temperature_k, conversion): (Option<f64>, f64),
    amplitude: Option<&Amplitude>,
) -> JudgedFigure {
    JudgedFigure {
        on: judgement,
        temperature_k,
        cmrr_db: Db::from_conversion(conversion),
        error_rti_v: amplitude.map(|a| conversion * a.volts),
    }
}

fn source_result(
    budget: &Budget,
    source: &Interference,
    analyses: &Analyses,
    requirement: Option<&Requirement>,
) -> Result<SourceResult, VerdictError> {
    let analysis = &analyses.shown;
    let conversion = conversion_totals(analysis);
    let gain = analysis.analysis.differential_gain.norm();
    let cmrr_db = conversion.map(Db::from_conversion);
    let error_rti_v = conversion.map(|e| e * source.amplitude.volts);
    let full_scale = budget.full_scale_volts();
    let error_fs_ppm =
        full_scale.map(|fs| conversion.map(|e| e * source.amplitude.peak_volts() / fs * 1e6));
    let judgement = judged_on(requirement);
    let after_tare = match source.tare {
        Some(tare) => Some(tared(budget, source, tare, analyses, judgement)?),
        None => None,
    };
    let judged = match &after_tare {
        Some((_, figure)) => *figure,
        None => judged_figure(
            judgement,
            analyses.judged(judgement),
            Some(&source.amplitude),
        ),
    };
    let mut checks = requirement
        .map(|r| cmrr_checks(r, source.frequency_hz, judged.cmrr_db))
        .unwrap_or_default();
    let through_bridge = match &source.excitation_ripple {
        Some(ripple) => Some(bridge_ripple(
            budget,
            ripple,
            &analysis.analysis,
            &error_rti_v,
        )?),
        None => None,
    };
    // What the reading keeps beside the common mode's error.
    let beside = through_bridge.as_ref().map_or(0.0, |r| r.left_rti_v);
    let judged = JudgedFigure {
        error_rti_v: judged.error_rti_v.map(|e| e + beside),
        ..judged
    };
    let reading_error = through_bridge
        .as_ref()
        .map_or(error_rti_v, |r| r.error_rti_v);
    let (filter_gain, after_filter) = filtered_error(budget, source, reading_error, gain).unzip();
    let scale = ReadingScale {
        volts_per_code: lsb_volts(budget).map(|lsb| lsb / gain),
        filter_gain,
        tared: after_tare.is_some(),
        unit: budget.measurand.as_ref().map_or("", |m| m.unit.as_str()),
    };
    let limit = source.max_error.or(requirement.and_then(|r| r.max_error));
    if let Some(limit) = &limit {
        // The judged error over the amplitude: the conversion; for a
        // tared source the residual's equivalent; for a ripple on the
        // excitation, with what the bridge passes on.
        let judged_conversion = judged.error_rti_v.unwrap_or(0.0) / source.amplitude.volts;
        checks.push(error_check(
            &source.name,
            limit,
            &source.amplitude,
            judged_conversion,
            &scale,
        ));
    }
    let reading = Reading::of(budget, gain, full_scale);
    Ok(SourceResult {
        source: source.name.clone(),
        frequency_hz: source.frequency_hz,
        amplitude_v: source.amplitude.volts,
        amplitude_form: source.amplitude.form,
        differential_gain: gain,
        cmrr_db,
        error_rti_v,
        error_rto_v: error_rti_v.map(|e| e * gain),
        error_fs_ppm,
        corner: corner(budget, analysis),
        error_lsb: reading.codes(&error_rti_v),
        error_measurand: reading.measurand(&error_rti_v),
        contributions: contribution_rows(budget, analysis, Some(&source.amplitude)),
        at_temperature: temperature_result(budget, analyses, Some(&source.amplitude)),
        after_filter,
        after_tare: after_tare.map(|(t, _)| t),
        judged,
        requirement: outcome(requirement, checks),
        // A tared source's residual needs each unit solved at two
        // temperatures; the yield does not count it per trial.
        max_conversion: match source.tare {
            Some(_) => None,
            None => limit
                .and_then(|l| scale.allowed_conversion(&l, &source.amplitude))
                .map(|allowed| (allowed - beside / source.amplitude.volts).max(0.0)),
        },
        through_bridge,
    })
}

/// A ripple on the excitation through the bridge: the differential part it
/// passes on at capacity, what the reading keeps of it (all of it with a
/// reference of the converter's own; with a ratiometric reference, what
/// the signal and reference paths do not share), and the error in the
/// reading with the common mode's `common_mode_error` added.
fn bridge_ripple(
    budget: &Budget,
    ripple: &crate::model::ExcitationRipple,
    analysis: &PointAnalysis,
    common_mode_error: &Totals<f64>,
) -> Result<super::BridgeRipple, VerdictError> {
    let (reference, left_rti_v) = match &budget.ratiometric_reference {
        Some(reference) => {
            let at_dc = nominal_differential_gain(budget, 0.0, analysis.delta_t)?;
            let kept =
                1.0 - reference.transfer(analysis.freq_hz) * at_dc / analysis.differential_gain;
            (reference.describe(), ripple.differential_v * kept.norm())
        }
        None => (
            "the converter's own, independent of the excitation".to_string(),
            ripple.differential_v,
        ),
    };
    let cancellation_db = budget
        .ratiometric_reference
        .map(|_| Db::from_conversion(left_rti_v / ripple.differential_v));
    let error_rti_v = common_mode_error.map(|e| e + left_rti_v);
    let reading = Reading::of(budget, analysis.differential_gain.norm(), None);
    Ok(super::BridgeRipple {
        ripple_v: ripple.stated.volts,
        across_bridge_v: ripple.across_bridge_v,
        differential_v: ripple.differential_v,
        reference,
        left_rti_v,
        cancellation_db,
        error_lsb: reading.codes(&error_rti_v),
        error_measurand: reading.measurand(&error_rti_v),
        error_rti_v,
    })
}

/// How an error referred to the input reads at the end of the chain: in
/// the converter's codes (through the chain's gain at the source's
/// frequency), in the measurand's unit, as ppm of full scale.
struct Reading {
    volts_per_code: Option<f64>,
    volts_per_unit: Option<f64>,
    full_scale_volts: Option<f64>,
}

impl Reading {
    fn of(budget: &Budget, gain: f64, full_scale_volts: Option<f64>) -> Reading {
        Reading {
            volts_per_code: lsb_volts(budget).map(|lsb| lsb / gain),
            volts_per_unit: budget.measurand.as_ref().map(|m| m.volts_per_unit),
            full_scale_volts,
        }
    }

    fn codes(&self, rti: &Totals<f64>) -> Option<Totals<f64>> {
        self.volts_per_code.map(|v| rti.map(|e| e / v))
    }

    fn measurand(&self, rti: &Totals<f64>) -> Option<Totals<f64>> {
        self.volts_per_unit.map(|v| rti.map(|e| e / v))
    }

    /// ppm of full scale of a DC (or peak) error.
    fn of_full_scale(&self, rti: &Totals<f64>) -> Option<Totals<f64>> {
        self.full_scale_volts.map(|fs| rti.map(|e| e / fs * 1e6))
    }
}

/// What a tare at the reference temperature leaves of `source`'s offset,
/// worst over the temperatures judged (the calibration's own, where only
/// the common mode's movement converts, and the ends of the range), and
/// the figure the source is judged on there.
fn tared(
    budget: &Budget,
    source: &Interference,
    tare: crate::model::Tare,
    analyses: &Analyses,
    judgement: Judgement,
) -> Result<(super::TaredError, JudgedFigure), VerdictError> {
    let amplitude_v = source.amplitude.volts;
    let computed;
    let calibration = match analyses.shown_k {
        None => &analyses.shown.analysis,
        Some(_) => {
            computed = analyse_point_at(budget, source.frequency_hz, 0.0)?;
            &computed
        }
    };
    let mut uses: Vec<(Option<f64>, &Analysed)> = vec![(analyses.shown_k, &analyses.shown)];
    uses.extend(analyses.ends.iter().map(|(k, a)| (Some(*k), a)));
    let mut worst: Option<(Option<f64>, &Analysed, TareResidual, Totals<f64>)> = None;
    for (kelvin, used) in uses {
        let residual = tare_residual(
            budget,
            calibration,
            &used.analysis,
            amplitude_v,
            tare.varies_by_v,
        )?;
        let totals = Totals {
            worst_case: residual.worst_case(),
            worst_corner: residual.worst_corner,
            rss: residual.rss(),
            nominal: residual.systematic,
        };
        if worst
            .as_ref()
            .is_none_or(|w| totals.judged(judgement) > w.3.judged(judgement))
        {
            worst = Some((kelvin, used, residual, totals));
        }
    }
    let (temperature_k, used, residual, totals) = worst.expect("the shown temperature is judged");
    let gain = used.analysis.differential_gain.norm();
    let full_scale = budget.full_scale_volts();
    let reading = Reading::of(budget, gain, full_scale);
    let figure = JudgedFigure {
        on: judgement,
        temperature_k,
        cmrr_db: Db::from_conversion(conversion_totals(used).judged(judgement)),
        error_rti_v: Some(totals.judged(judgement)),
    };
    let error = super::TaredError {
        calibrated_at_k: budget.temperature.map(|t| t.reference_k),
        varies_by_v: tare.varies_by_v,
        temperature_k,
        residual_fs_ppm: reading.of_full_scale(&totals),
        residual_lsb: reading.codes(&totals),
        residual_measurand: reading.measurand(&totals),
        residual_rti_v: totals,
        corners_solved: residual.corners_solved,
        contributions: tare_rows(budget, &residual, amplitude_v),
    };
    Ok((error, figure))
}

/// The residual's contributors, largest first, as contribution rows (their
/// CMRR the residual over the amplitude).
fn tare_rows(budget: &Budget, residual: &TareResidual, amplitude_v: f64) -> Vec<ContributionRow> {
    let worst = residual.worst_case();
    let share = |r: f64| if worst > 0.0 { r / worst } else { 0.0 };
    let mut rows = Vec::new();
    if residual.systematic > 0.0 {
        let r = residual.systematic;
        rows.push(systematic_row(r / amplitude_v, Some(r), share(r)));
    }
    for &(id, r) in residual.rows.iter().filter(|row| row.1 > 0.0) {
        rows.push(parameter_row(
            budget,
            id,
            r / amplitude_v,
            Some(r),
            share(r),
        ));
    }
    rows.sort_by(|a, b| ranking_key(b.share).total_cmp(&ranking_key(a.share)));
    rows
}

/// The error `source` leaves after the converter's digital filter, from
/// the error at the converter's input (referred to the input, each total)
/// and the chain's differential gain `gain` at the source's frequency, beside the filter's worst gain `|H|`; `None`
/// without a filter or for a DC source.
fn filtered_error(
    budget: &Budget,
    source: &Interference,
    error_rti_v: Totals<f64>,
    gain: f64,
) -> Option<(f64, FilteredError)> {
    let filter = budget.digital_filter.as_ref()?;
    if source.frequency_hz == 0.0 {
        return None;
    }
    let band_hz = source.frequency_band();
    // Validation has checked that a table covers the band.
    let (filter_gain, worst_at_hz) = filter.worst_gain(band_hz[0], band_hz[1]).ok()?;
    let error_rti_v = error_rti_v.map(|e| e * filter_gain);
    let reading = Reading::of(budget, gain, None);
    let filtered = FilteredError {
        filter: filter.describe(),
        band_hz,
        worst_at_hz,
        rejection_db: Db::from_conversion(filter_gain),
        error_lsb: reading.codes(&error_rti_v),
        error_measurand: reading.measurand(&error_rti_v),
        error_rti_v,
    };
    Some((filter_gain, filtered))
}

fn frequency_result(
    budget: &Budget,
    analyses: &Analyses,
    requirement: Option<&Requirement>,
) -> FrequencyResult {
    let analysis = &analyses.shown;
    let freq_hz = analysis.analysis.freq_hz;
    let cmrr_db = conversion_totals(analysis).map(Db::from_conversion);
    let judgement = judged_on(requirement);
    let judged = judged_figure(judgement, analyses.judged(judgement), None);
    let checks = requirement
        .map(|r| cmrr_checks(r, freq_hz, judged.cmrr_db))
        .unwrap_or_default();
    FrequencyResult {
        frequency_hz: freq_hz,
        differential_gain: analysis.analysis.differential_gain.norm(),
        cmrr_db,
        corner: corner(budget, analysis),
        contributions: contribution_rows(budget, analysis, None),
        at_temperature: temperature_result(budget, analyses, None),
        judged,
        requirement: outcome(requirement, checks),
    }
}
