//! Production spread judged: the Monte Carlo run with the requirement's
//! checks as the verdict states them, CMRR percentiles per frequency, error
//! percentiles per source, yields with their confidence intervals, and the
//! worst sign corner and headroom findings taken from the verdict.

use super::{
    run_yield, wilson_interval, TemperatureMode, TrialCheck, YieldError, YieldOptions, YieldRun,
};
use crate::engine::HeadroomFinding;
use crate::model::Budget;
use crate::quantity::{AmplitudeForm, SpreadShape};
use crate::verdict::{
    judge_with, Corner, Db, Operating, Report, Status, VerdictError, SCHEMA_VERSION,
};
use serde::Serialize;
use std::sync::atomic::AtomicBool;

/// The normal quantile of a two-sided 95 % interval.
const Z_95: f64 = 1.959964;

/// CMRR percentiles: the CMRR that the given share of units falls below.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CmrrPercentiles {
    /// 0.1 % of units fall below.
    pub p0_1: Db,
    /// 1 %.
    pub p1: Db,
    /// 5 %.
    pub p5: Db,
    /// The median.
    pub p50: Db,
}

/// Error percentiles: the error that the given share of units stays under.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ErrorPercentiles {
    /// The median, volts.
    pub p50: f64,
    /// 95 % of units stay under.
    pub p95: f64,
    /// 99 %.
    pub p99: f64,
    /// 99.9 %.
    pub p99_9: f64,
}

/// A yield with its 95 % Wilson interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct YieldFigure {
    /// Trials that passed.
    pub passed: u64,
    /// The passing fraction.
    pub fraction: f64,
    /// Lower end of the 95 % interval.
    pub ci_low: f64,
    /// Upper end of the 95 % interval.
    pub ci_high: f64,
}

fn yield_figure(passed: u64, trials: u64) -> YieldFigure {
    let (ci_low, ci_high) = wilson_interval(passed, trials, Z_95);
    YieldFigure {
        passed,
        fraction: if trials > 0 {
            passed as f64 / trials as f64
        } else {
            0.0
        },
        ci_low,
        ci_high,
    }
}

/// The spread at one analysis frequency.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FrequencyYield {
    /// The frequency, Hz.
    pub frequency_hz: f64,
    /// CMRR percentiles over the trials.
    pub cmrr_db: CmrrPercentiles,
    /// The worst trial's CMRR and its index (rerun it with the same seed).
    pub worst_trial_db: Db,
    /// The worst trial's index.
    pub worst_trial: u64,
    /// The worst sign corner, as the verdict states it (over the same
    /// temperatures as the run).
    pub worst_corner: Corner,
    /// The required minimum here, if any.
    pub required_db: Option<Db>,
    /// The share of trials meeting it.
    #[serde(rename = "yield")]
    pub yield_figure: Option<YieldFigure>,
}

/// The spread of one interference source's error.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SourceYield {
    /// The source's name.
    pub source: String,
    /// Its frequency, Hz.
    pub frequency_hz: f64,
    /// `rms`, `peak`, `peak_to_peak`, or null for DC.
    pub amplitude_form: Option<AmplitudeForm>,
    /// Error referred to the input, volts in `amplitude_form`.
    pub error_rti_v: ErrorPercentiles,
    /// The error in the reading, where it differs from `error_rti_v`: a
    /// ripple on the excitation adds what the bridge passes on (the
    /// verdict's, at nominal values), and the converter's digital filter
    /// multiplies by its worst gain over the source's band; null otherwise.
    pub error_as_read_v: Option<ErrorPercentiles>,
    /// The share of trials within the source's error limit, if it has one.
    #[serde(rename = "yield")]
    pub yield_figure: Option<YieldFigure>,
}

/// Everything `cmrr yield` reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct YieldReport {
    /// Version of the JSON layout.
    pub schema_version: u32,
    /// The budget's name.
    pub budget: String,
    /// Trials asked for.
    pub trials_requested: u64,
    /// Trials run (fewer when interrupted).
    pub trials_run: u64,
    /// Whether the run was stopped early.
    pub interrupted: bool,
    /// The master seed.
    pub seed: u64,
    /// Where the temperature sat.
    pub temperature: TemperatureMode,
    /// The default spread of toleranced values: `uniform`, `normal` or
    /// `truncated`.
    pub default_distribution: &'static str,
    /// For normal spreads, the tolerance in standard deviations.
    pub sigmas: f64,
    /// Per analysis frequency, ascending.
    pub frequencies: Vec<FrequencyYield>,
    /// Per interference source.
    pub sources: Vec<SourceYield>,
    /// The share of trials meeting every requirement at once; null without
    /// a requirement. When the figures do not hold (a headroom finding) no
    /// unit counts as passing: the finding is at nominal values, and every
    /// unit leaves its range with it.
    pub overall_yield: Option<YieldFigure>,
    /// The verdict's status at nominal values.
    pub status: Status,
    /// The verdict's headroom findings (nominal values).
    pub headroom: Vec<HeadroomFinding>,
    /// Switching sources the yield leaves out: their residues are judged
    /// once, at nominal values and the corners (`cmrr budget`,
    /// `cmrr residue`), not per trial.
    pub not_counted: Vec<String>,
    /// Tared sources whose limit the yield leaves out: what a tare leaves
    /// needs each unit at two temperatures, and is judged on the linear
    /// bound and a corner search (`cmrr budget`). Their error percentiles
    /// are of the offset before the tare.
    pub tared_not_counted: Vec<String>,
}

/// Why `cmrr yield` failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum YieldReportError {
    /// The run failed.
    #[error(transparent)]
    Run(#[from] YieldError),
    /// The verdict could not be reached.
    #[error(transparent)]
    Verdict(#[from] VerdictError),
    /// The run was stopped before any trial finished: there is no spread
    /// to report.
    #[error("stopped before any trial finished: there is no spread to report")]
    NoTrials,
}

fn shape_name(shape: SpreadShape) -> &'static str {
    match shape {
        SpreadShape::Uniform => "uniform",
        SpreadShape::Normal => "normal",
        SpreadShape::Truncated => "truncated",
    }
}

/// The analysis frequencies of a budget: its interference sources, required
/// minima and extra frequencies, ascending and without repeats.
pub fn analysis_frequencies(budget: &Budget) -> Vec<f64> {
    let mut frequencies: Vec<f64> = budget.interference.iter().map(|s| s.frequency_hz).collect();
    frequencies.extend(
        budget
            .requirement
            .iter()
            .flat_map(|r| r.min_cmrr.iter().map(|m| m.frequency_hz)),
    );
    frequencies.extend(&budget.extra_frequencies_hz);
    frequencies.sort_by(f64::total_cmp);
    frequencies.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * a.abs().max(1.0));
    frequencies
}

fn point_of(frequencies: &[f64], freq: f64) -> usize {
    frequencies
        .iter()
        .position(|f| (f - freq).abs() <= 1e-9 * freq.abs().max(1.0))
        .expect("every analysis frequency is in the list")
}

/// The requirement as per-trial checks: each source's largest conversion
/// as its verdict states it (the digital filter and a limit's codes or
/// units accounted for there).
pub fn trial_checks(budget: &Budget, verdict: &Report, frequencies: &[f64]) -> Vec<TrialCheck> {
    let mut checks = Vec::new();
    if let Some(requirement) = &budget.requirement {
        for minimum in &requirement.min_cmrr {
            checks.push(TrialCheck::MinimumCmrr {
                point: point_of(frequencies, minimum.frequency_hz),
                min_db: minimum.cmrr_db,
            });
        }
    }
    for (index, (source, judged)) in budget.interference.iter().zip(&verdict.results).enumerate() {
        if let Some(max_conversion) = judged.max_conversion {
            checks.push(TrialCheck::MaximumError {
                point: point_of(frequencies, source.frequency_hz),
                source: index,
                max_conversion,
            });
        }
    }
    checks
}

/// Run the Monte Carlo and the corner search, and assemble the report; the
/// run itself is returned too, for its histograms.
pub fn production_yield(
    budget: &Budget,
    options: YieldOptions,
    progress: &(dyn Fn(u64) + Sync),
    stop: &AtomicBool,
) -> Result<(YieldReport, YieldRun), YieldReportError> {
    let verdict = judge_with(budget, operating_of(options.temperature))?;
    production_yield_judged(budget, &verdict, options, progress, stop)
}

/// The verdict's temperatures for a run whose temperature sits at `mode`.
pub fn operating_of(mode: TemperatureMode) -> Operating {
    match mode {
        TemperatureMode::Reference => Operating::Reference,
        TemperatureMode::Drawn => Operating::OverRange,
        TemperatureMode::Cold => Operating::Cold,
        TemperatureMode::Hot => Operating::Hot,
    }
}

/// [`production_yield`] with the verdict already judged (as
/// `judge_with(budget, operating_of(options.temperature))`), so a caller
/// that has it does not judge twice.
pub fn production_yield_judged(
    budget: &Budget,
    verdict: &Report,
    options: YieldOptions,
    progress: &(dyn Fn(u64) + Sync),
    stop: &AtomicBool,
) -> Result<(YieldReport, YieldRun), YieldReportError> {
    let frequencies = analysis_frequencies(budget);
    let checks = trial_checks(budget, verdict, &frequencies);
    let run = run_yield(budget, &frequencies, &checks, options, progress, stop)?;
    if run.trials_run == 0 {
        return Err(YieldReportError::NoTrials);
    }
    let mut frequency_yields = Vec::new();
    for (index, &freq) in run.frequencies.iter().enumerate() {
        let histogram = &run.histograms[index];
        let corner = verdict
            .worst_corner_at(freq)
            .expect("the verdict covers every analysis frequency")
            .clone();
        let required = run
            .checks
            .iter()
            .zip(&run.check_passes)
            .find_map(|(check, passed)| match check {
                TrialCheck::MinimumCmrr { point, min_db } if *point == index => {
                    Some((*min_db, *passed))
                }
                _ => None,
            });
        let (worst_db, worst_trial) = histogram.worst().unwrap_or((f64::NAN, 0));
        frequency_yields.push(FrequencyYield {
            frequency_hz: freq,
            cmrr_db: CmrrPercentiles {
                p0_1: Db(histogram.quantile(0.001)),
                p1: Db(histogram.quantile(0.01)),
                p5: Db(histogram.quantile(0.05)),
                p50: Db(histogram.quantile(0.5)),
            },
            worst_trial_db: Db(worst_db),
            worst_trial,
            worst_corner: corner,
            required_db: required.map(|(db, _)| Db(db)),
            yield_figure: required.map(|(_, passed)| yield_figure(passed, run.trials_run)),
        });
    }
    let sources =
        budget
            .interference
            .iter()
            .enumerate()
            .map(|(source_index, source)| {
                let index = point_of(&run.frequencies, source.frequency_hz);
                let histogram = &run.histograms[index];
                let error_at = |p: f64| {
                    let db = histogram.quantile(1.0 - p);
                    if db.is_infinite() {
                        0.0
                    } else {
                        source.amplitude.volts * 10f64.powf(-db / 20.0)
                    }
                };
                let judged = &verdict.results[source_index];
                let beside = judged.through_bridge.as_ref().map(|r| r.left_rti_v);
                let filter_gain = judged
                    .after_filter
                    .as_ref()
                    .map(|f| f.rejection_db.conversion());
                let as_read = |e: f64| (e + beside.unwrap_or(0.0)) * filter_gain.unwrap_or(1.0);
                let error_as_read_v =
                    (beside.is_some() || filter_gain.is_some()).then(|| ErrorPercentiles {
                        p50: as_read(error_at(0.5)),
                        p95: as_read(error_at(0.95)),
                        p99: as_read(error_at(0.99)),
                        p99_9: as_read(error_at(0.999)),
                    });
                let passed = run.checks.iter().zip(&run.check_passes).find_map(
                    |(check, passed)| match check {
                        TrialCheck::MaximumError { source: s, .. } if *s == source_index => {
                            Some(*passed)
                        }
                        _ => None,
                    },
                );
                SourceYield {
                    source: source.name.clone(),
                    frequency_hz: source.frequency_hz,
                    amplitude_form: source.amplitude.form,
                    error_rti_v: ErrorPercentiles {
                        p50: error_at(0.5),
                        p95: error_at(0.95),
                        p99: error_at(0.99),
                        p99_9: error_at(0.999),
                    },
                    error_as_read_v,
                    yield_figure: passed.map(|p| yield_figure(p, run.trials_run)),
                }
            })
            .collect();
    let report = YieldReport {
        schema_version: SCHEMA_VERSION,
        budget: budget.name.clone(),
        trials_requested: options.trials,
        trials_run: run.trials_run,
        interrupted: run.interrupted,
        seed: options.seed,
        temperature: options.temperature,
        default_distribution: shape_name(budget.production.shape),
        sigmas: budget.production.sigmas,
        frequencies: frequency_yields,
        sources,
        overall_yield: (!run.checks.is_empty()).then(|| {
            let passed = if verdict.headroom.is_empty() {
                run.all_passed
            } else {
                0
            };
            yield_figure(passed, run.trials_run)
        }),
        status: verdict.verdict.status,
        headroom: verdict.headroom.clone(),
        not_counted: verdict.switching.iter().map(|s| s.source.clone()).collect(),
        tared_not_counted: budget
            .interference
            .iter()
            .filter(|s| s.tare.is_some())
            .map(|s| s.name.clone())
            .collect(),
    };
    Ok((report, run))
}
