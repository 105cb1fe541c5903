//! `cmrr`: the command-line edge. Parses arguments, calls the library,
//! renders, writes, and maps the outcome to an exit status:
//! 0 requirement met (or none stated), 1 requirement missed, 2 bad input or
//! usage.

use clap::{Args, Parser, Subcommand, ValueEnum};
use cmrr_budget::budget::load_budget;
use cmrr_budget::design::{Goal, Knob, KnobKind};
use cmrr_budget::model::Budget;
use cmrr_budget::montecarlo::{TemperatureMode, YieldOptions, MAX_TRIALS};
use cmrr_budget::plot::{plot_histogram, plot_overlay, OverlaySeries};
use cmrr_budget::quantity::{format_si, parse_quantity, Dimension};
use cmrr_budget::report::compare::{
    build_compare_report, render_compare_csv, render_compare_table,
};
use cmrr_budget::report::design::{
    improve_report, render_improve_table, render_sizing_table, render_trim_table, sizing_report,
    trim_report, TrimRow,
};
use cmrr_budget::report::sweep::{
    build_sweep_report, render_sweep_chart, render_sweep_csv, render_sweep_svg, render_sweep_table,
};
use cmrr_budget::report::yield_report::{
    build_yield_report, histogram_points, render_yield_csv, render_yield_table,
};
use cmrr_budget::report::{
    build_report, csv::render_csv, json::render_json, table::render_table, Db, Report,
};
use cmrr_budget::sweep::{
    run_sweep, run_sweep_at, SweepSpec, DEFAULT_FROM_HZ, DEFAULT_PER_DECADE, DEFAULT_TO_HZ,
};
use serde::Serialize;
use std::io::{self, IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// Common-mode rejection budgets for differential sensor front ends.
#[derive(Debug, Parser)]
#[command(name = "cmrr", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Compute the CMRR budget of a budget file: per interference source,
    /// each contributor's share, the totals, and the verdict.
    Budget {
        /// The budget file (YAML).
        file: PathBuf,
        #[command(flatten)]
        output: OutputArgs,
    },
    /// Validate a budget file without computing it.
    Check {
        /// The budget file (YAML).
        file: PathBuf,
    },
    /// Sweep the budget over frequency: the totals and every contributor's
    /// CMRR at log-spaced frequencies, and where the dominant contributor
    /// changes.
    Sweep {
        /// The budget file (YAML).
        file: PathBuf,
        #[command(flatten)]
        range: RangeArgs,
        #[command(flatten)]
        output: OutputArgs,
        /// Also draw the sweep as an SVG plot in this file.
        #[arg(long, value_name = "FILE.svg")]
        plot: Option<PathBuf>,
        /// Print a compact text chart instead of the table.
        #[arg(long)]
        chart: bool,
        /// Where the temperature sits: reference (default), cold or hot end
        /// of the budget's range.
        #[arg(long, value_enum)]
        temperature: Option<TemperatureArg>,
    },
    /// Monte Carlo over the parts' spreads with the exact engine: CMRR and
    /// error percentiles, yield against the requirement with its confidence
    /// interval, and the worst sign corner.
    Yield {
        /// The budget file (YAML).
        file: PathBuf,
        /// How many trials (1 to 100000000).
        #[arg(long, default_value_t = 10_000)]
        trials: u64,
        /// The master seed: the same seed gives the same numbers on any
        /// number of threads.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Where the operating temperature sits (default: drawn over the
        /// budget's range if it has one, else the reference).
        #[arg(long, value_enum)]
        temperature: Option<TemperatureArg>,
        /// Threads to use (default: every core).
        #[arg(long)]
        threads: Option<usize>,
        #[command(flatten)]
        output: OutputArgs,
        /// Also draw the CMRR histogram as an SVG plot in this file.
        #[arg(long, value_name = "FILE.svg")]
        plot: Option<PathBuf>,
        /// The frequency of the histogram (default: the first required
        /// minimum, else the first interference source).
        #[arg(long, value_name = "FREQ")]
        plot_at: Option<String>,
    },
    /// Find the loosest setting of one free parameter that meets the
    /// requirement: a resistor class, a network's ratio tolerance, filter
    /// capacitor matching, the allowed source imbalance, TCR tracking, an
    /// in-amp's first-stage gain, or a pair's tail resistance.
    Size {
        /// The budget file (YAML).
        file: PathBuf,
        /// The parameter to size.
        #[arg(long, value_enum)]
        vary: VaryArg,
        /// The stage's label (default: the first stage where it applies).
        #[arg(long, value_name = "LABEL")]
        stage: Option<String>,
        /// Size for this Monte Carlo yield (e.g. `99 %`) instead of the
        /// worst case.
        #[arg(long = "yield", value_name = "PERCENT")]
        yield_target: Option<String>,
        /// Trials per setting for a yield target.
        #[arg(long, default_value_t = 5_000)]
        trials: u64,
        /// The master seed for a yield target.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        #[command(flatten)]
        output: OutputArgs,
    },
    /// What must change: each contributor against an equal share of the
    /// allowed error, and what halving each tolerance buys.
    Improve {
        /// The budget file (YAML).
        file: PathBuf,
        /// Also rank by the Monte Carlo yield gained, with this many trials
        /// per parameter (same seed throughout).
        #[arg(long, value_name = "N")]
        yield_trials: Option<u64>,
        /// The master seed for the yield ranking.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        #[command(flatten)]
        output: OutputArgs,
    },
    /// The effect of trimming a difference stage at DC: CMRR before and
    /// after, at the interference frequencies and over temperature.
    Trim {
        /// The budget file (YAML).
        file: PathBuf,
        /// The stage's label (a difference amplifier or a three-op-amp
        /// in-amp; default: the first such stage).
        #[arg(long, value_name = "LABEL")]
        stage: Option<String>,
        /// The trim's resolution as a ratio error, e.g. `10 ppm`.
        #[arg(long, value_name = "FRACTION")]
        resolution: String,
        #[command(flatten)]
        output: OutputArgs,
    },
    /// Put several designs side by side: each interference source's CMRR,
    /// error, margin and dominant contributor per design.
    Compare {
        /// Two or more budget files (YAML), in the order to show them.
        #[arg(required = true, num_args = 2..)]
        files: Vec<PathBuf>,
        #[command(flatten)]
        output: OutputArgs,
        /// Also draw the designs' worst-case CMRR against frequency, overlaid,
        /// as an SVG plot in this file.
        #[arg(long, value_name = "FILE.svg")]
        plot: Option<PathBuf>,
        #[command(flatten)]
        range: RangeArgs,
    },
}

/// Where and how a report is written.
#[derive(Debug, Args)]
struct OutputArgs {
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    format: Format,
    /// Write the report to this file instead of standard output.
    #[arg(short = 'o', long = "output", value_name = "PATH")]
    output: Option<PathBuf>,
    /// Replace output files (report, plot) that already exist.
    #[arg(long)]
    force: bool,
}

/// A sweep range from the command line; parts left out come from the
/// budget file, then the defaults (0.1 Hz to 1 MHz, 20 per decade).
#[derive(Debug, Args)]
struct RangeArgs {
    /// Lowest frequency, e.g. `1 Hz`.
    #[arg(long, value_name = "FREQ")]
    from: Option<String>,
    /// Highest frequency, e.g. `100 kHz`.
    #[arg(long, value_name = "FREQ")]
    to: Option<String>,
    /// Points per decade.
    #[arg(long, value_name = "N")]
    per_decade: Option<u32>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum VaryArg {
    /// The tolerance class of a stage's resistors (IEC 60062 ladder).
    Resistors,
    /// A matched network's ratio tolerance.
    NetworkRatio,
    /// The tolerance class of the input filter capacitors.
    FilterCapacitors,
    /// The source impedances' tolerance (the allowed imbalance).
    SourceImbalance,
    /// The TCR tracking of a stage's resistors.
    Tracking,
    /// A three-op-amp in-amp's first-stage gain.
    FirstStageGain,
    /// A differential pair's tail resistance.
    Tail,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum TemperatureArg {
    /// At the reference temperature.
    Reference,
    /// Drawn uniformly over the range, per trial.
    Drawn,
    /// At the cold end.
    Cold,
    /// At the hot end.
    Hot,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum Format {
    /// Readable tables for a terminal.
    Table,
    /// The versioned JSON report (see README).
    Json,
    /// Rows with units in the headers.
    Csv,
}

/// Exit statuses.
const MET: u8 = 0;
const MISSED: u8 = 1;
const BAD_INPUT: u8 = 2;

fn main() -> ExitCode {
    let cli = Cli::parse();
    match run(cli) {
        Ok(code) => ExitCode::from(code),
        Err(message) => {
            eprintln!("error: {message}");
            ExitCode::from(BAD_INPUT)
        }
    }
}

fn run(cli: Cli) -> Result<u8, String> {
    match cli.command {
        Command::Check { file } => check(&file),
        Command::Budget { file, output } => budget(&file, &output),
        Command::Sweep {
            file,
            range,
            output,
            plot,
            chart,
            temperature,
        } => sweep(&file, &range, &output, plot.as_deref(), chart, temperature),
        Command::Compare {
            files,
            output,
            plot,
            range,
        } => compare(&files, &output, plot.as_deref(), &range),
        Command::Size {
            file,
            vary,
            stage,
            yield_target,
            trials,
            seed,
            output,
        } => size(
            &file,
            vary,
            stage.as_deref(),
            yield_target.as_deref(),
            trials,
            seed,
            &output,
        ),
        Command::Improve {
            file,
            yield_trials,
            seed,
            output,
        } => improve(&file, yield_trials, seed, &output),
        Command::Trim {
            file,
            stage,
            resolution,
            output,
        } => trim(&file, stage.as_deref(), &resolution, &output),
        Command::Yield {
            file,
            trials,
            seed,
            temperature,
            threads,
            output,
            plot,
            plot_at,
        } => production_yield(
            &file,
            trials,
            seed,
            temperature,
            threads,
            &output,
            plot.as_deref(),
            plot_at.as_deref(),
        ),
    }
}

fn size(
    file: &Path,
    vary: VaryArg,
    stage: Option<&str>,
    yield_target: Option<&str>,
    trials: u64,
    seed: u64,
    output: &OutputArgs,
) -> Result<u8, String> {
    output.check_paths(&[file], None)?;
    let budget = load_budget(file).map_err(|e| e.to_string())?;
    let kind = match vary {
        VaryArg::Resistors => KnobKind::Resistors,
        VaryArg::NetworkRatio => KnobKind::NetworkRatio,
        VaryArg::FilterCapacitors => KnobKind::FilterCapacitors,
        VaryArg::SourceImbalance => KnobKind::SourceImbalance,
        VaryArg::Tracking => KnobKind::Tracking,
        VaryArg::FirstStageGain => KnobKind::FirstStageGain,
        VaryArg::Tail => KnobKind::Tail,
    };
    let knob =
        Knob::find(&budget, kind, stage).map_err(|e| format!("{}: --vary: {e}", file.display()))?;
    let (goal, goal_text) = match yield_target {
        Some(text) => {
            let q = parse_quantity(text, Dimension::Fraction)
                .map_err(|e| format!("option --yield: {e}"))?;
            if !(q.value > 0.0 && q.value < 1.0) {
                return Err(format!(
                    "option --yield: `{text}` must lie between 0 % and 100 %"
                ));
            }
            check_trial_count("--trials", trials)?;
            (
                Goal::Yield {
                    fraction: q.value,
                    trials,
                    seed,
                },
                format!(
                    "a yield of at least {} ({trials} trials per setting, seed {seed})",
                    text.trim()
                ),
            )
        }
        None => (
            Goal::WorstCase,
            "the requirement as judged by `cmrr budget`".to_string(),
        ),
    };
    let sizing = cmrr_budget::design::size(&budget, &knob, goal)
        .map_err(|e| format!("{}: {e}", file.display()))?;
    let report = sizing_report(&budget.name, goal_text, sizing);
    let text = match output.format {
        Format::Table => render_sizing_table(&report),
        Format::Json => json(&report),
        Format::Csv => {
            return Err("`size` reports as a table or JSON; use --format table or json".into())
        }
    };
    output.emit(&text, &cmrr_budget::report::cautions_for(&budget))?;
    Ok(MET)
}

fn improve(
    file: &Path,
    yield_trials: Option<u64>,
    seed: u64,
    output: &OutputArgs,
) -> Result<u8, String> {
    if let Some(trials) = yield_trials {
        check_trial_count("--yield-trials", trials)?;
    }
    output.check_paths(&[file], None)?;
    let budget = load_budget(file).map_err(|e| e.to_string())?;
    let base = build_report(&budget).map_err(|e| format!("{}: {e}", file.display()))?;
    let allocation = cmrr_budget::design::allocate(&base);
    let sensitivity = cmrr_budget::design::sensitivity(&budget, yield_trials.map(|t| (t, seed)))
        .map_err(|e| format!("{}: {e}", file.display()))?;
    let sources = budget.interference.iter().map(|s| s.name.clone()).collect();
    let report = improve_report(&budget.name, sources, allocation, sensitivity);
    let text = match output.format {
        Format::Table => render_improve_table(&report),
        Format::Json => json(&report),
        Format::Csv => {
            return Err("`improve` reports as a table or JSON; use --format table or json".into())
        }
    };
    output.emit(&text, &base.cautions)?;
    Ok(MET)
}

fn trim(
    file: &Path,
    stage: Option<&str>,
    resolution: &str,
    output: &OutputArgs,
) -> Result<u8, String> {
    output.check_paths(&[file], None)?;
    let budget = load_budget(file).map_err(|e| e.to_string())?;
    let resolution = parse_quantity(resolution, Dimension::Fraction)
        .map_err(|e| format!("option --resolution: {e}"))?
        .value;
    if !(resolution > 0.0 && resolution < 1.0) {
        return Err("option --resolution: a trim resolution lies between 0 and 100 %".into());
    }
    let trimmable = |kind: &cmrr_budget::stage::StageKind| {
        matches!(
            kind,
            cmrr_budget::stage::StageKind::DifferenceAmp(_)
                | cmrr_budget::stage::StageKind::ThreeOpAmpInAmp(_)
        )
    };
    let index = match stage {
        Some(label) => budget
            .chain
            .iter()
            .position(|s| s.label == label && trimmable(&s.kind))
            .ok_or_else(|| format!("{}: --stage: no difference amplifier or three-op-amp in-amp is labelled `{label}`", file.display()))?,
        None => budget
            .chain
            .iter()
            .position(|s| trimmable(&s.kind))
            .ok_or_else(|| format!("{}: the chain has no difference stage to trim", file.display()))?,
    };
    let trimmed = cmrr_budget::design::trimmed(&budget, index, resolution)
        .expect("the stage has a difference stage");
    let before = build_report(&budget).map_err(|e| format!("{}: {e}", file.display()))?;
    let after = build_report(&trimmed).map_err(|e| format!("{}: {e}", file.display()))?;
    let rows = before
        .results
        .iter()
        .zip(&after.results)
        .map(|(b, a)| TrimRow {
            source: b.source.clone(),
            frequency_hz: b.frequency_hz,
            before_db: b.cmrr_db.worst_case.0,
            after_db: a.cmrr_db.worst_case.0,
            after_over_temperature_db: a.at_temperature.as_ref().map(|t| t.cmrr_db.worst_case.0),
        })
        .collect();
    let report = trim_report(&budget.name, &budget.chain[index].label, resolution, rows);
    let text = match output.format {
        Format::Table => render_trim_table(&report),
        Format::Json => json(&report),
        Format::Csv => {
            return Err("`trim` reports as a table or JSON; use --format table or json".into())
        }
    };
    output.emit(&text, &before.cautions)?;
    Ok(MET)
}

#[allow(clippy::too_many_arguments)]
fn production_yield(
    file: &Path,
    trials: u64,
    seed: u64,
    temperature: Option<TemperatureArg>,
    threads: Option<usize>,
    output: &OutputArgs,
    plot: Option<&Path>,
    plot_at: Option<&str>,
) -> Result<u8, String> {
    check_trial_count("--trials", trials)?;
    output.check_paths(&[file], plot)?;
    let budget = load_budget(file).map_err(|e| e.to_string())?;
    let mode = match temperature {
        Some(TemperatureArg::Reference) => TemperatureMode::Reference,
        Some(TemperatureArg::Drawn) => TemperatureMode::Drawn,
        Some(TemperatureArg::Cold) => TemperatureMode::Cold,
        Some(TemperatureArg::Hot) => TemperatureMode::Hot,
        None if budget.temperature.is_some() => TemperatureMode::Drawn,
        None => TemperatureMode::Reference,
    };
    let plot_frequency = plot_at
        .map(|t| {
            parse_quantity(t, Dimension::Frequency)
                .map(|q| q.value)
                .map_err(|e| format!("option --plot-at: {e}"))
        })
        .transpose()?;
    let stop = std::sync::Arc::new(std::sync::atomic::AtomicBool::new(false));
    {
        let stop = stop.clone();
        // A second Ctrl-C after the first ends the process at once.
        let _ = ctrlc::set_handler(move || {
            if stop.swap(true, std::sync::atomic::Ordering::Relaxed) {
                std::process::exit(130);
            }
        });
    }
    let bar = if std::io::stderr().is_terminal() {
        let bar = indicatif::ProgressBar::new(trials);
        bar.set_style(
            indicatif::ProgressStyle::with_template(
                "{elapsed_precise} [{bar:40}] {pos}/{len} trials, {eta} left",
            )
            .expect("the template is valid")
            .progress_chars("=> "),
        );
        Some(bar)
    } else {
        None
    };
    let progress = |done: u64| {
        if let Some(bar) = &bar {
            bar.set_position(done);
        }
    };
    let options = YieldOptions {
        trials,
        seed,
        temperature: mode,
    };
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads.unwrap_or(0))
        .build()
        .map_err(|e| format!("cannot start the worker threads: {e}"))?;
    let result = pool.install(|| build_yield_report(&budget, options, &progress, &stop));
    if let Some(bar) = &bar {
        bar.finish_and_clear();
    }
    let (report, run) = result.map_err(|e| format!("{}: {e}", file.display()))?;
    if report.interrupted {
        eprintln!(
            "interrupted: {} of {} trials ran; the figures below are from those",
            report.trials_run, report.trials_requested
        );
    }
    if let Some(path) = plot {
        let index = match plot_frequency {
            Some(f) => run
                .frequencies
                .iter()
                .position(|g| (g - f).abs() <= 1e-9 * f.max(1.0))
                .ok_or_else(|| {
                    format!(
                        "option --plot-at: {} is not one of the budget's analysis frequencies",
                        format_si(f, "Hz")
                    )
                })?,
            None => report
                .frequencies
                .iter()
                .position(|f| f.required_db.is_some())
                .unwrap_or(0),
        };
        let at = &report.frequencies[index];
        let title = format!(
            "{}: CMRR at {} over {} units",
            report.budget,
            format_si(at.frequency_hz, "Hz"),
            report.trials_run
        );
        let percentiles = [
            ("0.1 %", at.cmrr_db.p0_1.0),
            ("1 %", at.cmrr_db.p1.0),
            ("median", at.cmrr_db.p50.0),
        ];
        let svg = plot_histogram(
            &title,
            &histogram_points(&run, index),
            at.required_db.map(|d| d.0),
            &percentiles,
        )
        .map_err(|e| e.to_string())?;
        write_file(path, &svg)?;
    }
    let text = match output.format {
        Format::Table => render_yield_table(&report),
        Format::Json => json(&report),
        Format::Csv => render_yield_csv(&report),
    };
    output.emit(&text, &cmrr_budget::report::cautions_for(&budget))?;
    Ok(MET)
}

fn check(file: &Path) -> Result<u8, String> {
    let budget = load_budget(file).map_err(|e| e.to_string())?;
    let amplifiers = budget
        .chain
        .iter()
        .filter(|s| s.kind.is_amplifier())
        .count();
    print_out(&format!(
        "{}: valid budget `{}`: {} stage(s) ({} amplifier), {} interference source(s), {} toleranced parameter(s)\n",
        file.display(),
        budget.name,
        budget.chain.len(),
        amplifiers,
        budget.interference.len(),
        budget.parameters.iter().filter(|(_, p)| p.varies()).count(),
    ))?;
    Ok(MET)
}

fn budget(file: &Path, output: &OutputArgs) -> Result<u8, String> {
    output.check_paths(&[file], None)?;
    let budget = load_budget(file).map_err(|e| e.to_string())?;
    let report = build_report(&budget).map_err(|e| format!("{}: {e}", file.display()))?;
    let text = match output.format {
        Format::Table => render_table(&report),
        Format::Json => render_json(&report),
        Format::Csv => render_csv(&report),
    };
    output.emit(&text, &report.cautions)?;
    Ok(exit_status(&report))
}

fn sweep(
    file: &Path,
    range: &RangeArgs,
    output: &OutputArgs,
    plot: Option<&Path>,
    chart: bool,
    temperature: Option<TemperatureArg>,
) -> Result<u8, String> {
    if chart && output.format != Format::Table {
        return Err(
            "--chart draws on the terminal: use it with the table format, or drop it".into(),
        );
    }
    output.check_paths(&[file], plot)?;
    let budget = load_budget(file).map_err(|e| e.to_string())?;
    let spec = range.spec(Some(&budget))?;
    let delta_t = match (temperature, budget.temperature) {
        (None | Some(TemperatureArg::Reference), _) => 0.0,
        (Some(TemperatureArg::Drawn), _) => {
            return Err(
                "--temperature drawn belongs to `cmrr yield`; a sweep takes reference, cold or hot"
                    .into(),
            );
        }
        (Some(TemperatureArg::Cold), Some(r)) => r.low_k - r.reference_k,
        (Some(TemperatureArg::Hot), Some(r)) => r.high_k - r.reference_k,
        (Some(_), None) => {
            return Err(format!(
                "{}: the budget has no temperature range, so a sweep runs at the reference only",
                file.display()
            ));
        }
    };
    let sweep =
        run_sweep_at(&budget, spec, delta_t).map_err(|e| format!("{}: {e}", file.display()))?;
    let report = build_sweep_report(&budget, &sweep, delta_t)
        .map_err(|e| format!("{}: {e}", file.display()))?;
    if let Some(path) = plot {
        let svg = render_sweep_svg(&report).map_err(|e| e.to_string())?;
        write_file(path, &svg)?;
    }
    let text = match (output.format, chart) {
        (Format::Table, true) => render_sweep_chart(&report),
        (Format::Table, false) => render_sweep_table(&report),
        (Format::Json, _) => json(&report),
        (Format::Csv, _) => render_sweep_csv(&report),
    };
    output.emit(&text, &cmrr_budget::report::cautions_for(&budget))?;
    Ok(MET)
}

fn compare(
    files: &[PathBuf],
    output: &OutputArgs,
    plot: Option<&Path>,
    range: &RangeArgs,
) -> Result<u8, String> {
    let inputs: Vec<&Path> = files.iter().map(PathBuf::as_path).collect();
    output.check_paths(&inputs, plot)?;
    let mut budgets: Vec<(String, Budget)> = Vec::new();
    for file in files {
        let budget = load_budget(file).map_err(|e| e.to_string())?;
        budgets.push((file.display().to_string(), budget));
    }
    let mut reports: Vec<(String, Report)> = Vec::new();
    for (file, budget) in &budgets {
        let report = build_report(budget).map_err(|e| format!("{file}: {e}"))?;
        reports.push((file.clone(), report));
    }
    let borrowed: Vec<(String, &Report)> = reports.iter().map(|(f, r)| (f.clone(), r)).collect();
    let comparison = build_compare_report(&borrowed);
    if let Some(path) = plot {
        let spec = range.spec(None)?;
        let mut series = Vec::new();
        let mut required = Vec::new();
        let mut interference: Vec<(f64, String)> = Vec::new();
        for ((file, budget), design) in budgets.iter().zip(&comparison.designs) {
            let sweep = run_sweep(budget, spec).map_err(|e| format!("{file}: {e}"))?;
            series.push(OverlaySeries {
                label: design.label.clone(),
                points: sweep
                    .points
                    .iter()
                    .map(|p| (p.freq_hz, Db::from_conversion(p.worst_case).0))
                    .collect(),
            });
            for minimum in budget.requirement.iter().flat_map(|r| r.min_cmrr.iter()) {
                required.push((minimum.frequency_hz, minimum.cmrr_db));
            }
            for source in budget.interference.iter().filter(|s| s.frequency_hz > 0.0) {
                if !interference
                    .iter()
                    .any(|(f, _)| (*f - source.frequency_hz).abs() <= 1e-9 * f.max(1.0))
                {
                    interference.push((source.frequency_hz, format_si(source.frequency_hz, "Hz")));
                }
            }
        }
        let svg = plot_overlay(
            "worst-case CMRR, designs compared",
            &series,
            &required,
            &interference,
        )
        .map_err(|e| e.to_string())?;
        write_file(path, &svg)?;
    }
    let text = match output.format {
        Format::Table => render_compare_table(&comparison),
        Format::Json => json(&comparison),
        Format::Csv => render_compare_csv(&comparison),
    };
    let cautions: Vec<String> = reports
        .iter()
        .flat_map(|(_, r)| r.cautions.iter().cloned())
        .collect();
    output.emit(&text, &cautions)?;
    Ok(MET)
}

fn json<T: Serialize>(value: &T) -> String {
    let mut text =
        serde_json::to_string_pretty(value).expect("reports hold only strings, numbers and lists");
    text.push('\n');
    text
}

impl RangeArgs {
    /// Options first, then the budget file's `sweep`, then the defaults.
    fn spec(&self, budget: Option<&Budget>) -> Result<SweepSpec, String> {
        let file = budget.map(|b| b.sweep).unwrap_or_default();
        let frequency = |text: &Option<String>, option: &str| -> Result<Option<f64>, String> {
            text.as_deref()
                .map(|t| {
                    parse_quantity(t, Dimension::Frequency)
                        .map(|q| q.value)
                        .map_err(|e| format!("option --{option}: {e}"))
                })
                .transpose()
        };
        Ok(SweepSpec {
            from_hz: frequency(&self.from, "from")?
                .or(file.from_hz)
                .unwrap_or(DEFAULT_FROM_HZ),
            to_hz: frequency(&self.to, "to")?
                .or(file.to_hz)
                .unwrap_or(DEFAULT_TO_HZ),
            per_decade: self
                .per_decade
                .or(file.per_decade)
                .unwrap_or(DEFAULT_PER_DECADE),
        })
    }
}

impl OutputArgs {
    /// Refuse outputs that would overwrite an input, or an existing file
    /// without `--force`.
    fn check_paths(&self, inputs: &[&Path], plot: Option<&Path>) -> Result<(), String> {
        for output in self.output.iter().map(PathBuf::as_path).chain(plot) {
            check_output_path(output, inputs, self.force)?;
        }
        if let (Some(report), Some(plot)) = (&self.output, plot) {
            if report == plot {
                return Err(format!(
                    "{}: the report and the plot cannot go to the same file",
                    plot.display()
                ));
            }
        }
        Ok(())
    }

    /// Write the text to the output file, or print it; cautions also go to
    /// standard error when the report goes to a file.
    fn emit(&self, text: &str, cautions: &[String]) -> Result<(), String> {
        match &self.output {
            Some(path) => {
                write_file(path, text)?;
                for caution in cautions {
                    eprintln!("{caution}");
                }
                Ok(())
            }
            None => print_out(text),
        }
    }
}

fn exit_status(report: &Report) -> u8 {
    match report.verdict.met {
        Some(false) => MISSED,
        _ => MET,
    }
}

/// Print to standard output; a closed pipe (`cmrr … | head`) is not an
/// error.
fn print_out(text: &str) -> Result<(), String> {
    let mut stdout = io::stdout().lock();
    match stdout
        .write_all(text.as_bytes())
        .and_then(|()| stdout.flush())
    {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(format!("cannot write to standard output: {e}")),
    }
}

/// Refuse an output path that would overwrite a budget file, or an
/// existing file without `--force`.
fn check_output_path(output: &Path, inputs: &[&Path], force: bool) -> Result<(), String> {
    let is_input = inputs.iter().any(
        |input| match (output.canonicalize(), input.canonicalize()) {
            (Ok(a), Ok(b)) => a == b,
            _ => false,
        },
    );
    if is_input {
        return Err(format!(
            "{}: the output path is the budget file itself; choose another path",
            output.display()
        ));
    }
    if output.exists() && !force {
        return Err(format!(
            "{}: the output file already exists; add --force to replace it, or choose another path",
            output.display()
        ));
    }
    Ok(())
}

/// Write through a temporary file beside the target and rename it into
/// place, so a failure never leaves a half-written file.
fn write_file(path: &Path, text: &str) -> Result<(), String> {
    let fail = |e: io::Error| format!("{}: cannot write the report: {e}", path.display());
    let directory = match path.parent() {
        Some(dir) if !dir.as_os_str().is_empty() => dir.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .ok_or_else(|| format!("{}: not a file path", path.display()))?;
    let temporary = directory.join(format!(
        ".{}.{}.partial",
        name.to_string_lossy(),
        std::process::id()
    ));
    let result = std::fs::write(&temporary, text).and_then(|()| std::fs::rename(&temporary, path));
    if result.is_err() {
        let _ = std::fs::remove_file(&temporary);
    }
    result.map_err(fail)
}

/// Refuse a trial count outside what one run may take (`option` names the
/// flag it came from).
fn check_trial_count(option: &str, trials: u64) -> Result<(), String> {
    if trials == 0 || trials > MAX_TRIALS {
        return Err(format!(
            "{option} {trials}: a run takes 1 to {MAX_TRIALS} trials; run several seeds for more"
        ));
    }
    Ok(())
}
