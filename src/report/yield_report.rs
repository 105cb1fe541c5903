//! The production-spread report of `cmrr yield`: CMRR percentiles per
//! frequency, error percentiles per source, yields with their confidence
//! intervals, and the worst sign corner beside the linear bound.

use super::{Db, SCHEMA_VERSION};
use crate::engine::EngineError;
use crate::model::{describe_volts, Budget};
use crate::montecarlo::{
    run_yield, wilson_interval, worst_corner, TemperatureMode, TrialCheck, YieldError,
    YieldOptions, YieldRun,
};
use crate::quantity::{format_db, format_share, format_si, AmplitudeForm, SpreadShape};
use serde::Serialize;
use std::sync::atomic::AtomicBool;
use tabled::builder::Builder;
use tabled::settings::object::Columns;
use tabled::settings::{Alignment, Style};

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

/// One parameter's value at the worst corner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CornerValue {
    /// The parameter.
    pub name: String,
    /// Its stage.
    pub stage: String,
    /// The value, with its unit.
    pub value: String,
}

/// The worst sign corner at one frequency.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CornerReport {
    /// CMRR at the worst corner found, solved exactly.
    pub cmrr_db: Db,
    /// The linear worst-case bound at the same point.
    pub linear_bound_db: Db,
    /// `exhaustive` or `directed`.
    pub search: &'static str,
    /// How many corners were solved.
    pub corners_solved: u64,
    /// Every varying parameter's value there.
    pub parameters: Vec<CornerValue>,
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
    /// The worst sign corner.
    pub worst_corner: CornerReport,
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
    /// a requirement.
    pub overall_yield: Option<YieldFigure>,
}

/// Why `cmrr yield` failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum YieldReportError {
    /// The run failed.
    #[error(transparent)]
    Run(#[from] YieldError),
    /// The corner search failed.
    #[error(transparent)]
    Engine(#[from] EngineError),
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

/// The requirement as per-trial checks.
pub fn trial_checks(budget: &Budget, frequencies: &[f64]) -> Vec<TrialCheck> {
    let mut checks = Vec::new();
    if let Some(requirement) = &budget.requirement {
        for minimum in &requirement.min_cmrr {
            checks.push(TrialCheck::MinimumCmrr {
                point: point_of(frequencies, minimum.frequency_hz),
                min_db: minimum.cmrr_db,
            });
        }
    }
    let default_limit = budget.requirement.as_ref().and_then(|r| r.max_error);
    for source in &budget.interference {
        if let Some(limit) = source.max_error.or(default_limit) {
            checks.push(TrialCheck::MaximumError {
                point: point_of(frequencies, source.frequency_hz),
                peak_v: source.amplitude.peak_volts(),
                limit_v: limit.peak_volts(),
            });
        }
    }
    checks
}

/// Run the Monte Carlo and the corner search, and assemble the report; the
/// run itself is returned too, for its histograms.
pub fn build_yield_report(
    budget: &Budget,
    options: YieldOptions,
    progress: &(dyn Fn(u64) + Sync),
    stop: &AtomicBool,
) -> Result<(YieldReport, YieldRun), YieldReportError> {
    let frequencies = analysis_frequencies(budget);
    let checks = trial_checks(budget, &frequencies);
    let run = run_yield(budget, &frequencies, &checks, options, progress, stop)?;
    let corner_excursions: Vec<f64> = match (options.temperature, budget.temperature) {
        (TemperatureMode::Cold, Some(r)) => vec![r.low_k - r.reference_k],
        (TemperatureMode::Hot, Some(r)) => vec![r.high_k - r.reference_k],
        (TemperatureMode::Drawn, Some(r)) => r.excursions().to_vec(),
        _ => vec![0.0],
    };
    let mut frequency_yields = Vec::new();
    for (index, &freq) in run.frequencies.iter().enumerate() {
        let histogram = &run.histograms[index];
        let mut corner = worst_corner(budget, freq, corner_excursions[0])?;
        for &delta_t in &corner_excursions[1..] {
            let other = worst_corner(budget, freq, delta_t)?;
            if other.conversion > corner.conversion {
                corner = other;
            }
        }
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
            worst_corner: CornerReport {
                cmrr_db: Db::from_conversion(corner.conversion),
                linear_bound_db: Db::from_conversion(corner.linear_bound),
                search: if corner.exhaustive {
                    "exhaustive"
                } else {
                    "directed"
                },
                corners_solved: corner.evaluated,
                parameters: corner
                    .values
                    .iter()
                    .map(|(id, value)| {
                        let p = budget.parameters.get(*id);
                        let sign = if *value >= p.nominal { "+" } else { "−" };
                        let shown = match (p.presentation, p.variation) {
                            (
                                crate::model::Presentation::Value(d),
                                crate::model::Variation::Relative { tolerance },
                            ) => {
                                format!(
                                    "{} {sign}{}",
                                    format_si(p.nominal, d.symbol()),
                                    crate::quantity::format_fraction(tolerance)
                                )
                            }
                            (
                                crate::model::Presentation::Value(
                                    crate::quantity::Dimension::Fraction,
                                ),
                                _,
                            ) => {
                                format!("{sign}{}", crate::quantity::format_fraction(value.abs()))
                            }
                            (crate::model::Presentation::Value(d), _) => {
                                format!("{sign}{}", format_si(value.abs(), d.symbol()))
                            }
                            (crate::model::Presentation::ReciprocalCmrr, _) => {
                                format!("{} ({sign})", format_db(-20.0 * value.abs().log10()))
                            }
                        };
                        CornerValue {
                            name: p.name.clone(),
                            stage: budget.chain[p.stage].label.clone(),
                            value: shown,
                        }
                    })
                    .collect(),
            },
            required_db: required.map(|(db, _)| Db(db)),
            yield_figure: required.map(|(_, passed)| yield_figure(passed, run.trials_run)),
        });
    }
    let sources =
        budget
            .interference
            .iter()
            .map(|source| {
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
                let passed = run.checks.iter().zip(&run.check_passes).find_map(
                    |(check, passed)| match check {
                        TrialCheck::MaximumError { point, peak_v, .. }
                            if *point == index && *peak_v == source.amplitude.peak_volts() =>
                        {
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
        overall_yield: (!run.checks.is_empty())
            .then(|| yield_figure(run.all_passed, run.trials_run)),
    };
    Ok((report, run))
}

fn percent(figure: &YieldFigure) -> String {
    let low = format_share(figure.ci_low);
    let high = format_share(figure.ci_high);
    format!(
        "{} (95 %: {} to {})",
        format_share(figure.fraction),
        low.trim_end_matches(" %"),
        high
    )
}

fn frequency_text(freq: f64) -> String {
    if freq == 0.0 {
        "DC".into()
    } else {
        format_si(freq, "Hz")
    }
}

/// The yield report as terminal tables.
pub fn render_yield_table(report: &YieldReport) -> String {
    let mut out = format!(
        "CMRR production spread: {}\n{} trials{}, seed {}, temperature {}, toleranced values {} (tolerance at {} σ where normal)\n",
        report.budget,
        report.trials_run,
        if report.interrupted { format!(" of {} (interrupted)", report.trials_requested) } else { String::new() },
        report.seed,
        match report.temperature {
            TemperatureMode::Reference => "at the reference",
            TemperatureMode::Drawn => "drawn over the range",
            TemperatureMode::Cold => "at the cold end",
            TemperatureMode::Hot => "at the hot end",
        },
        report.default_distribution,
        report.sigmas
    );
    let mut table = Builder::default();
    table.push_record([
        "frequency",
        "CMRR 0.1 %",
        "1 %",
        "5 %",
        "median",
        "worst trial",
        "worst corner",
        "linear bound",
        "yield",
    ]);
    for f in &report.frequencies {
        table.push_record([
            frequency_text(f.frequency_hz),
            format_db(f.cmrr_db.p0_1.0),
            format_db(f.cmrr_db.p1.0),
            format_db(f.cmrr_db.p5.0),
            format_db(f.cmrr_db.p50.0),
            format_db(f.worst_trial_db.0),
            format!(
                "{} ({})",
                format_db(f.worst_corner.cmrr_db.0),
                f.worst_corner.search
            ),
            format_db(f.worst_corner.linear_bound_db.0),
            match (&f.required_db, &f.yield_figure) {
                (Some(req), Some(y)) => format!("≥ {}: {}", format_db(req.0), percent(y)),
                _ => "—".into(),
            },
        ]);
    }
    let mut table = table.build();
    table
        .with(Style::rounded())
        .modify(Columns::new(0..8), Alignment::right());
    out.push_str("\nCMRR that the given share of units falls below\n");
    out.push_str(&table.to_string());
    out.push('\n');
    let mut table = Builder::default();
    table.push_record(["source", "median error", "95 %", "99 %", "99.9 %", "yield"]);
    for s in &report.sources {
        let v = |x: f64| describe_volts(x, s.amplitude_form);
        table.push_record([
            format!("{} ({})", s.source, frequency_text(s.frequency_hz)),
            v(s.error_rti_v.p50),
            v(s.error_rti_v.p95),
            v(s.error_rti_v.p99),
            v(s.error_rti_v.p99_9),
            s.yield_figure.as_ref().map_or("no limit".into(), percent),
        ]);
    }
    let mut table = table.build();
    table
        .with(Style::rounded())
        .modify(Columns::new(1..5), Alignment::right());
    out.push_str("\nerror referred to the input that the given share of units stays under\n");
    out.push_str(&table.to_string());
    out.push('\n');
    match &report.overall_yield {
        Some(y) => out.push_str(&format!(
            "\nyield against the whole requirement: {}\n",
            percent(y)
        )),
        None => out.push_str("\nno requirement stated: no yield\n"),
    }
    if let Some(f) = report.frequencies.iter().min_by(|a, b| {
        a.worst_corner
            .cmrr_db
            .0
            .total_cmp(&b.worst_corner.cmrr_db.0)
    }) {
        let extremes: Vec<String> = f
            .worst_corner
            .parameters
            .iter()
            .take(8)
            .map(|p| format!("{} = {}", p.name, p.value))
            .collect();
        out.push_str(&format!(
            "worst corner at {}: {} ({} corners solved); {}{}\n",
            frequency_text(f.frequency_hz),
            format_db(f.worst_corner.cmrr_db.0),
            f.worst_corner.corners_solved,
            extremes.join(", "),
            if f.worst_corner.parameters.len() > 8 {
                ", … (all in JSON)"
            } else {
                ""
            }
        ));
    }
    out
}

/// The yield report as CSV: one row per frequency.
pub fn render_yield_csv(report: &YieldReport) -> String {
    let mut out = String::from("frequency_hz,cmrr_p0_1_db,cmrr_p1_db,cmrr_p5_db,cmrr_p50_db,worst_trial_cmrr_db,worst_corner_cmrr_db,linear_bound_cmrr_db,required_cmrr_db,yield,yield_ci_low,yield_ci_high\n");
    for f in &report.frequencies {
        let y = f.yield_figure;
        let fields = [
            format!("{}", f.frequency_hz),
            super::csv::db(f.cmrr_db.p0_1),
            super::csv::db(f.cmrr_db.p1),
            super::csv::db(f.cmrr_db.p5),
            super::csv::db(f.cmrr_db.p50),
            super::csv::db(f.worst_trial_db),
            super::csv::db(f.worst_corner.cmrr_db),
            super::csv::db(f.worst_corner.linear_bound_db),
            f.required_db.map(super::csv::db).unwrap_or_default(),
            y.map(|y| format!("{}", y.fraction)).unwrap_or_default(),
            y.map(|y| format!("{}", y.ci_low)).unwrap_or_default(),
            y.map(|y| format!("{}", y.ci_high)).unwrap_or_default(),
        ];
        out.push_str(&fields.join(","));
        out.push('\n');
    }
    out
}

/// A run's histogram at one frequency, rebinned to about 60 bars for a
/// plot: (lower edge dB, count).
pub fn histogram_points(run: &YieldRun, index: usize) -> Vec<(f64, u64)> {
    let histogram = &run.histograms[index];
    match histogram.span() {
        Some((low, high)) => {
            let width = ((high - low) / 60.0).max(crate::montecarlo::BIN_DB);
            histogram.rebinned(low, high + width, width)
        }
        None => Vec::new(),
    }
}
