//! `cmrr`: the command-line edge. Parses arguments, calls the library,
//! renders, writes, and maps the outcome to an exit status:
//! 0 requirement met (or none stated), 1 requirement missed, 2 bad input or
//! usage.

use clap::{Args, Parser, Subcommand, ValueEnum};
use cmrr_budget::budget::{load_budget, read_budget, LoadError};
use cmrr_budget::design::{
    is_trimmable, trim_effect, DesignError, Goal, Knob, KnobKind, TrimMethod,
};
use cmrr_budget::model::Budget;
use cmrr_budget::montecarlo::production::{production_yield, YieldReportError};
use cmrr_budget::montecarlo::{TemperatureMode, YieldOptions, MAX_TRIALS};
use cmrr_budget::plot::{plot_histogram, plot_overlay, OverlaySeries, PlotError};
use cmrr_budget::quantity::{format_si, parse_quantity, Dimension};
use cmrr_budget::report::compare::build_compare_report;
use cmrr_budget::report::design::{improve_report, sizing_report, trim_report};
use cmrr_budget::report::residue::{build_residue_report, render_residue_svg};
use cmrr_budget::report::sweep::{build_sweep_report, render_sweep_chart, render_sweep_svg};
use cmrr_budget::report::yield_report::histogram_points;
use cmrr_budget::report::{Db, Render, Report};
use cmrr_budget::sweep::{
    run_sweep, run_sweep_at, SweepFailure, SweepSpec, DEFAULT_FROM_HZ, DEFAULT_PER_DECADE,
    DEFAULT_TO_HZ,
};
use cmrr_budget::verdict::{judge, judge_in_full, judge_with, Operating, VerdictError};
use std::io::{self, IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// Common-mode rejection budgets for differential sensor front ends.
#[derive(Debug, Parser)]
#[command(name = "cmrr", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
    /// Print nothing on standard error but errors: no progress bar, and no
    /// echo of the cautions when the report goes to a file (the report
    /// itself still carries them).
    #[arg(long, global = true)]
    quiet: bool,
}

/// Whether `--quiet` was given.
static QUIET: std::sync::OnceLock<bool> = std::sync::OnceLock::new();

fn quiet() -> bool {
    QUIET.get().copied().unwrap_or(false)
}

/// The path that stands for standard input (a budget) or standard output
/// (a report).
const STANDARD_STREAM: &str = "-";

fn is_standard_stream(path: &Path) -> bool {
    path.as_os_str() == STANDARD_STREAM
}

/// Read the budget at `file`, or from standard input for `-`.
fn load(file: &Path) -> Result<Budget, CliError> {
    if is_standard_stream(file) {
        Ok(read_budget(io::stdin().lock(), "standard input")?)
    } else {
        Ok(load_budget(file)?)
    }
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Compute the CMRR budget of a budget file: per interference source,
    /// each contributor's share, the totals, and the verdict.
    Budget {
        /// The budget file (YAML), or `-` for standard input.
        file: PathBuf,
        #[command(flatten)]
        output: OutputArgs,
    },
    /// Validate a budget file without computing it.
    Check {
        /// The budget file (YAML), or `-` for standard input.
        file: PathBuf,
        /// `table` for readable messages (default), `json` for every
        /// problem as data (file, position, field, problem, fix).
        #[arg(long, value_enum, default_value_t = CheckFormat::Table)]
        format: CheckFormat,
    },
    /// Print a completion script for a shell (bash, zsh, fish, elvish,
    /// powershell) on standard output.
    Completions {
        /// The shell.
        shell: clap_complete::Shell,
    },
    /// Print the manual page (roff) on standard output, e.g.
    /// `cmrr manual > cmrr.1`.
    Manual,
    /// Print the budget file's JSON Schema on standard output, for an
    /// editor to validate and complete budget files against.
    Schema,
    /// Sweep the budget over frequency: the totals and every contributor's
    /// CMRR at log-spaced frequencies, and where the dominant contributor
    /// changes.
    Sweep {
        /// The budget file (YAML), or `-` for standard input.
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
        temperature: Option<SweepTemperature>,
    },
    /// Monte Carlo over the parts' spreads with the exact engine: CMRR and
    /// error percentiles, yield against the requirement with its confidence
    /// interval, and the worst sign corner.
    Yield {
        /// The budget file (YAML), or `-` for standard input.
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
        /// The budget file (YAML), or `-` for standard input.
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
        /// The budget file (YAML), or `-` for standard input.
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
        /// The budget file (YAML), or `-` for standard input.
        file: PathBuf,
        /// The stage's label (a difference amplifier or a three-op-amp
        /// in-amp; default: the first such stage).
        #[arg(long, value_name = "LABEL")]
        stage: Option<String>,
        /// The trim's resolution as a ratio error, e.g. `10 ppm`.
        #[arg(long, value_name = "FRACTION")]
        resolution: String,
        /// How the stage is trimmed: null (R4 adjusted per unit for zero
        /// common-mode output at DC, the bench practice) or ratio (the
        /// resistors' ratio matched).
        #[arg(long, value_enum, default_value_t = TrimMethodArg::Null)]
        method: TrimMethodArg,
        #[command(flatten)]
        output: OutputArgs,
    },
    /// The residue a switching common mode leaves over one period: its
    /// peak and rms, how long after each edge it settles into the allowed
    /// error, what a sampling window reads; the waveforms as CSV or JSON,
    /// and a plot.
    Residue {
        /// The budget file (YAML), or `-` for standard input.
        file: PathBuf,
        /// Only the switching source of this name (default: every one).
        #[arg(long, value_name = "NAME")]
        source: Option<String>,
        /// Where the temperature sits: over the range (default: the
        /// reference and the worse end), or at the reference, cold or hot
        /// end only.
        #[arg(long, value_enum)]
        temperature: Option<SweepTemperature>,
        #[command(flatten)]
        output: OutputArgs,
        /// Also draw the common mode and the residue against time as an
        /// SVG plot in this file (one source: name it with `--source` when
        /// the budget has several).
        #[arg(long, value_name = "FILE.svg")]
        plot: Option<PathBuf>,
        /// Write at most this many samples per period in the CSV and JSON
        /// (every k-th of those computed; default: all of them).
        #[arg(long, value_name = "N")]
        samples: Option<usize>,
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
    /// Write the report to this file instead of standard output (`-`:
    /// standard output).
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

/// How `cmrr check` reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum CheckFormat {
    /// Readable messages.
    Table,
    /// Every problem as JSON.
    Json,
}

/// How `cmrr trim` trims.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum TrimMethodArg {
    /// R4 adjusted per unit until the common-mode output at DC is zero.
    Null,
    /// R1 to R3 exact, R4 within the resolution.
    Ratio,
}

/// Where a sweep's temperature sits.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum SweepTemperature {
    /// At the reference temperature.
    Reference,
    /// At the cold end.
    Cold,
    /// At the hot end.
    Hot,
}

/// Where a Monte Carlo run's temperature sits.
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

impl From<Format> for cmrr_budget::report::Format {
    fn from(format: Format) -> Self {
        match format {
            Format::Table => cmrr_budget::report::Format::Table,
            Format::Json => cmrr_budget::report::Format::Json,
            Format::Csv => cmrr_budget::report::Format::Csv,
        }
    }
}

/// Why a command failed: every error is reported once, here, with exit
/// status 2.
#[derive(Debug, thiserror::Error)]
enum CliError {
    /// The budget file could not be read or is invalid.
    #[error(transparent)]
    Load(#[from] LoadError),
    /// A computation on a valid budget failed; names the file.
    #[error("{file}: {source}")]
    InFile {
        /// The budget file.
        file: String,
        /// What failed.
        source: Failure,
    },
    /// An option's value is not usable.
    #[error("option {option}: {problem}")]
    Option {
        /// The option, e.g. `--yield`.
        option: &'static str,
        /// What is wrong and what would be right.
        problem: String,
    },
    /// Options that do not go together.
    #[error("{0}")]
    Usage(&'static str),
    /// An output path that would clobber a file, or could not be written.
    #[error("{path}: {problem}")]
    Output {
        /// The path.
        path: String,
        /// What is wrong.
        problem: String,
    },
    /// A plot could not be drawn.
    #[error(transparent)]
    Plot(#[from] PlotError),
}

impl CliError {
    /// 130 for a run stopped before it had anything to report, 2 for
    /// everything else.
    fn exit_status(&self) -> u8 {
        match self {
            CliError::InFile {
                source: Failure::Yield(YieldReportError::NoTrials),
                ..
            } => INTERRUPTED,
            _ => BAD_INPUT,
        }
    }
}

/// What failed in a computation on a valid budget.
#[derive(Debug, thiserror::Error)]
enum Failure {
    #[error(transparent)]
    Verdict(#[from] VerdictError),
    #[error(transparent)]
    Sweep(#[from] SweepFailure),
    #[error(transparent)]
    Yield(#[from] YieldReportError),
    #[error(transparent)]
    Design(#[from] DesignError),
    #[error("{0}")]
    Budget(String),
}

/// Attach the budget file's name to a computation's failure.
fn in_file<E: Into<Failure>>(file: &Path) -> impl FnOnce(E) -> CliError + '_ {
    move |error| CliError::InFile {
        file: file.display().to_string(),
        source: error.into(),
    }
}

/// Exit statuses.
const MET: u8 = 0;
const MISSED: u8 = 1;
const BAD_INPUT: u8 = 2;
/// A Monte Carlo run stopped by Ctrl-C: the report covers the trials that
/// ran (the shell's convention for an interrupt, 128 + SIGINT).
const INTERRUPTED: u8 = 130;

/// The most worker threads a run takes: far more than any machine's cores,
/// and few enough that starting them is quick.
const MAX_THREADS: usize = 1024;

fn main() -> ExitCode {
    let cli = Cli::parse();
    let _ = QUIET.set(cli.quiet);
    match run(cli) {
        Ok(code) => ExitCode::from(code),
        Err(error) => {
            eprintln!("error: {error}");
            ExitCode::from(error.exit_status())
        }
    }
}

fn run(cli: Cli) -> Result<u8, CliError> {
    match cli.command {
        Command::Check { file, format } => check(&file, format),
        Command::Completions { shell } => {
            let mut command = <Cli as clap::CommandFactory>::command();
            let mut text = Vec::new();
            clap_complete::generate(shell, &mut command, "cmrr", &mut text);
            print_out(&String::from_utf8_lossy(&text))?;
            Ok(MET)
        }
        Command::Schema => {
            print_out(&cmrr_budget::budget::budget_schema())?;
            Ok(MET)
        }
        Command::Manual => {
            let mut text = Vec::new();
            clap_mangen::Man::new(<Cli as clap::CommandFactory>::command())
                .render(&mut text)
                .map_err(|e| CliError::Output {
                    path: "standard output".into(),
                    problem: format!("cannot render the manual: {e}"),
                })?;
            print_out(&String::from_utf8_lossy(&text))?;
            Ok(MET)
        }
        Command::Budget { file, output } => budget(&file, &output),
        Command::Residue {
            file,
            source,
            temperature,
            output,
            plot,
            samples,
        } => residue(
            &file,
            source.as_deref(),
            temperature,
            &output,
            (plot.as_deref(), samples),
        ),
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
            method,
            output,
        } => trim(&file, stage.as_deref(), &resolution, method, &output),
        Command::Yield {
            file,
            trials,
            seed,
            temperature,
            threads,
            output,
            plot,
            plot_at,
        } => yield_command(
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
) -> Result<u8, CliError> {
    output.check_paths(&[file], None)?;
    let budget = load(file)?;
    let kind = match vary {
        VaryArg::Resistors => KnobKind::Resistors,
        VaryArg::NetworkRatio => KnobKind::NetworkRatio,
        VaryArg::FilterCapacitors => KnobKind::FilterCapacitors,
        VaryArg::SourceImbalance => KnobKind::SourceImbalance,
        VaryArg::Tracking => KnobKind::Tracking,
        VaryArg::FirstStageGain => KnobKind::FirstStageGain,
        VaryArg::Tail => KnobKind::Tail,
    };
    let knob = Knob::find(&budget, kind, stage).map_err(|e| CliError::Option {
        option: "--vary",
        problem: format!("{}: {e}", file.display()),
    })?;
    let (goal, goal_text) = match yield_target {
        Some(text) => {
            let q = parse_quantity(text, Dimension::Fraction).map_err(|e| CliError::Option {
                option: "--yield",
                problem: e.to_string(),
            })?;
            if !(q.value > 0.0 && q.value < 1.0) {
                return Err(CliError::Option {
                    option: "--yield",
                    problem: format!("`{text}` must lie between 0 % and 100 %"),
                });
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
    let sizing = cmrr_budget::design::size(&budget, &knob, goal).map_err(in_file(file))?;
    let report = sizing_report(&budget.name, goal_text, sizing);
    output.emit_report(&report, &cmrr_budget::report::cautions_for(&budget))?;
    Ok(MET)
}

fn improve(
    file: &Path,
    yield_trials: Option<u64>,
    seed: u64,
    output: &OutputArgs,
) -> Result<u8, CliError> {
    if let Some(trials) = yield_trials {
        check_trial_count("--yield-trials", trials)?;
    }
    output.check_paths(&[file], None)?;
    let budget = load(file)?;
    let base = judge(&budget).map_err(in_file(file))?;
    let allocation = cmrr_budget::design::allocate(&base);
    let sensitivity = cmrr_budget::design::sensitivity(&budget, yield_trials.map(|t| (t, seed)))
        .map_err(in_file(file))?;
    let sources = budget.interference.iter().map(|s| s.name.clone()).collect();
    let report = improve_report(&base, sources, allocation, sensitivity);
    output.emit_report(&report, &base.cautions)?;
    Ok(MET)
}

fn trim(
    file: &Path,
    stage: Option<&str>,
    resolution: &str,
    method: TrimMethodArg,
    output: &OutputArgs,
) -> Result<u8, CliError> {
    let method = match method {
        TrimMethodArg::Null => TrimMethod::Null,
        TrimMethodArg::Ratio => TrimMethod::Ratio,
    };
    output.check_paths(&[file], None)?;
    let budget = load(file)?;
    let resolution = parse_quantity(resolution, Dimension::Fraction)
        .map_err(|e| CliError::Option {
            option: "--resolution",
            problem: e.to_string(),
        })?
        .value;
    if !(resolution > 0.0 && resolution < 1.0) {
        return Err(CliError::Option {
            option: "--resolution",
            problem: "a trim resolution lies between 0 and 100 %, e.g. `10 ppm`".into(),
        });
    }
    let index = match stage {
        Some(label) => budget
            .chain
            .iter()
            .position(|s| s.label == label && is_trimmable(&s.kind))
            .ok_or_else(|| CliError::Option {
                option: "--stage",
                problem: format!(
                    "{}: no difference amplifier or three-op-amp in-amp is labelled `{label}`",
                    file.display()
                ),
            })?,
        None => budget
            .chain
            .iter()
            .position(|s| is_trimmable(&s.kind))
            .ok_or_else(|| {
                in_file(file)(Failure::Budget(
                    "the chain has no difference stage to trim".into(),
                ))
            })?,
    };
    let effect = trim_effect(&budget, index, resolution, method).map_err(in_file(file))?;
    let report = trim_report(
        &budget.name,
        &budget.chain[index].label,
        (resolution, method),
        effect.judged_on,
        effect.rows,
    );
    output.emit_report(&report, &cmrr_budget::report::cautions_for(&budget))?;
    Ok(MET)
}

#[allow(clippy::too_many_arguments)]
fn yield_command(
    file: &Path,
    trials: u64,
    seed: u64,
    temperature: Option<TemperatureArg>,
    threads: Option<usize>,
    output: &OutputArgs,
    plot: Option<&Path>,
    plot_at: Option<&str>,
) -> Result<u8, CliError> {
    check_trial_count("--trials", trials)?;
    if let Some(n) = threads.filter(|n| *n == 0 || *n > MAX_THREADS) {
        return Err(CliError::Option {
            option: "--threads",
            problem: format!(
                "{n}: give 1 to {MAX_THREADS} threads, or leave the option out to use every core"
            ),
        });
    }
    output.check_paths(&[file], plot)?;
    let budget = load(file)?;
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
                .map_err(|e| CliError::Option {
                    option: "--plot-at",
                    problem: e.to_string(),
                })
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
    let bar = if std::io::stderr().is_terminal() && !quiet() {
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
        .map_err(|e| CliError::Output {
            path: "worker threads".into(),
            problem: format!("cannot start them: {e}"),
        })?;
    let result = pool.install(|| production_yield(&budget, options, &progress, &stop));
    if let Some(bar) = &bar {
        bar.finish_and_clear();
    }
    let (report, run) = result.map_err(in_file(file))?;
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
                .ok_or_else(|| CliError::Option {
                    option: "--plot-at",
                    problem: format!(
                        "{} is not one of the budget's analysis frequencies",
                        format_si(f, "Hz")
                    ),
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
            ("5 %", at.cmrr_db.p5.0),
            ("median", at.cmrr_db.p50.0),
        ];
        let svg = plot_histogram(
            &title,
            &histogram_points(&run, index),
            at.required_db.map(|d| d.0),
            &percentiles,
        )?;
        write_file(path, &svg)?;
    }
    output.emit_report(&report, &cmrr_budget::report::cautions_for(&budget))?;
    Ok(if report.interrupted { INTERRUPTED } else { MET })
}

fn check(file: &Path, format: CheckFormat) -> Result<u8, CliError> {
    if format == CheckFormat::Json {
        let outcome = load(file);
        let (valid, problems) = match &outcome {
            Ok(_) => (true, Vec::new()),
            Err(CliError::Load(LoadError::Invalid(diagnostics))) => (false, diagnostics.clone()),
            Err(_) => return outcome.map(|_| MET),
        };
        let document = serde_json::json!({
            "report": "check",
            "schema_version": cmrr_budget::report::SCHEMA_VERSION,
            "file": if is_standard_stream(file) { "standard input".to_string() } else { file.display().to_string() },
            "valid": valid,
            "problems": problems,
        });
        print_out(&format!(
            "{}\n",
            serde_json::to_string_pretty(&document).expect("a check result serialises")
        ))?;
        return Ok(if valid { MET } else { BAD_INPUT });
    }
    let budget = load(file)?;
    let amplifiers = budget
        .chain
        .iter()
        .filter(|s| s.kind.is_amplifier())
        .count();
    let shown = if is_standard_stream(file) {
        "standard input".to_string()
    } else {
        file.display().to_string()
    };
    print_out(&format!(
        "{shown}: valid budget `{}`: {} stage(s) ({} amplifier), {} interference source(s), {} switching source(s), {} toleranced parameter(s)\n",
        budget.name,
        budget.chain.len(),
        amplifiers,
        budget.interference.len(),
        budget.switching.len(),
        budget.parameters.iter().filter(|(_, p)| p.varies()).count(),
    ))?;
    Ok(MET)
}

fn budget(file: &Path, output: &OutputArgs) -> Result<u8, CliError> {
    output.check_paths(&[file], None)?;
    let budget = load(file)?;
    let report = judge(&budget).map_err(in_file(file))?;
    output.emit_report(&report, &report.cautions)?;
    Ok(exit_status(&report))
}

fn residue(
    file: &Path,
    source: Option<&str>,
    temperature: Option<SweepTemperature>,
    output: &OutputArgs,
    (plot, samples): (Option<&Path>, Option<usize>),
) -> Result<u8, CliError> {
    if samples == Some(0) {
        return Err(CliError::Option {
            option: "--samples",
            problem: "give at least 1 sample per period".into(),
        });
    }
    output.check_paths(&[file], plot)?;
    let budget = load(file)?;
    if budget.switching.is_empty() {
        return Err(CliError::Option {
            option: "residue",
            problem: format!(
                "{} names no switching source; add one under `switching:` (see the README, \"Switching edges\")",
                file.display()
            ),
        });
    }
    if let Some(name) = source {
        if !budget.switching.iter().any(|s| s.name == name) {
            let names: Vec<String> = budget
                .switching
                .iter()
                .map(|s| format!("`{}`", s.name))
                .collect();
            return Err(CliError::Option {
                option: "--source",
                problem: format!(
                    "no switching source is named `{name}`; the budget has {}",
                    names.join(", ")
                ),
            });
        }
    }
    if plot.is_some() && source.is_none() && budget.switching.len() > 1 {
        return Err(CliError::Usage(
            "--plot draws one switching source: name it with --source",
        ));
    }
    let operating = match temperature {
        None => Operating::OverRange,
        Some(SweepTemperature::Reference) => Operating::Reference,
        Some(SweepTemperature::Cold) => Operating::Cold,
        Some(SweepTemperature::Hot) => Operating::Hot,
    };
    let (verdict, judged) = judge_in_full(&budget, operating).map_err(in_file(file))?;
    let report = build_residue_report(&verdict, judged, |name| source.is_none_or(|s| s == name));
    if let (Some(path), Some(first)) = (plot, report.sources.first()) {
        write_file(path, &render_residue_svg(first)?)?;
    }
    let report = match samples {
        Some(n) => report.thinned(n),
        None => report,
    };
    output.emit_report(&report, &verdict.cautions)?;
    Ok(exit_status(&verdict))
}

fn sweep(
    file: &Path,
    range: &RangeArgs,
    output: &OutputArgs,
    plot: Option<&Path>,
    chart: bool,
    temperature: Option<SweepTemperature>,
) -> Result<u8, CliError> {
    if chart && output.format != Format::Table {
        return Err(CliError::Usage(
            "--chart draws on the terminal: use it with the table format, or drop it",
        ));
    }
    output.check_paths(&[file], plot)?;
    let budget = load(file)?;
    let spec = range.spec(Some(&budget))?;
    let operating = match temperature {
        None | Some(SweepTemperature::Reference) => Operating::Reference,
        Some(SweepTemperature::Cold) => Operating::Cold,
        Some(SweepTemperature::Hot) => Operating::Hot,
    };
    let verdict = judge_with(&budget, operating).map_err(in_file(file))?;
    let delta_t = operating.shown_excursion(&budget).map_err(in_file(file))?;
    let sweep = run_sweep_at(&budget, spec, delta_t).map_err(in_file(file))?;
    let report = build_sweep_report(&budget, &sweep, delta_t, &verdict);
    if let Some(path) = plot {
        let svg = render_sweep_svg(&report)?;
        write_file(path, &svg)?;
    }
    if chart {
        output.emit(&render_sweep_chart(&report), &verdict.cautions)?;
    } else {
        output.emit_report(&report, &verdict.cautions)?;
    }
    Ok(MET)
}

fn compare(
    files: &[PathBuf],
    output: &OutputArgs,
    plot: Option<&Path>,
    range: &RangeArgs,
) -> Result<u8, CliError> {
    let inputs: Vec<&Path> = files.iter().map(PathBuf::as_path).collect();
    output.check_paths(&inputs, plot)?;
    let mut budgets: Vec<(&Path, Budget)> = Vec::new();
    for file in files {
        budgets.push((file.as_path(), load(file)?));
    }
    let mut reports: Vec<(String, Report)> = Vec::new();
    for (file, budget) in &budgets {
        let report = judge(budget).map_err(in_file(file))?;
        reports.push((file.display().to_string(), report));
    }
    let borrowed: Vec<(String, &Report)> = reports.iter().map(|(f, r)| (f.clone(), r)).collect();
    let comparison = build_compare_report(&borrowed);
    if let Some(path) = plot {
        let spec = range.spec(None)?;
        let mut series = Vec::new();
        let mut required = Vec::new();
        let mut interference: Vec<(f64, String)> = Vec::new();
        for ((file, budget), design) in budgets.iter().zip(&comparison.designs) {
            let sweep = run_sweep(budget, spec).map_err(in_file(file))?;
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
            "worst-case CMRR at the reference temperature, designs compared",
            &series,
            &required,
            &interference,
        )?;
        write_file(path, &svg)?;
    }
    let cautions: Vec<String> = reports
        .iter()
        .flat_map(|(_, r)| r.cautions.iter().cloned())
        .collect();
    output.emit_report(&comparison, &cautions)?;
    Ok(MET)
}

impl RangeArgs {
    /// Options first, then the budget file's `sweep`, then the defaults.
    fn spec(&self, budget: Option<&Budget>) -> Result<SweepSpec, CliError> {
        let file = budget.map(|b| b.sweep).unwrap_or_default();
        let frequency =
            |text: &Option<String>, option: &'static str| -> Result<Option<f64>, CliError> {
                text.as_deref()
                    .map(|t| {
                        parse_quantity(t, Dimension::Frequency)
                            .map(|q| q.value)
                            .map_err(|e| CliError::Option {
                                option,
                                problem: e.to_string(),
                            })
                    })
                    .transpose()
            };
        Ok(SweepSpec {
            from_hz: frequency(&self.from, "--from")?
                .or(file.from_hz)
                .unwrap_or(DEFAULT_FROM_HZ),
            to_hz: frequency(&self.to, "--to")?
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
    fn check_paths(&self, inputs: &[&Path], plot: Option<&Path>) -> Result<(), CliError> {
        if plot.is_some_and(is_standard_stream) {
            return Err(CliError::Usage(
                "--plot - : the plot goes to a file; standard output is for the report (`-o -`)",
            ));
        }
        for output in self
            .output
            .iter()
            .map(PathBuf::as_path)
            .chain(plot)
            .filter(|p| !is_standard_stream(p))
        {
            check_output_path(output, inputs, self.force)?;
        }
        if let (Some(report), Some(plot)) = (&self.output, plot) {
            if resolved(report) == resolved(plot) {
                return Err(CliError::Output {
                    path: plot.display().to_string(),
                    problem: "the report and the plot cannot go to the same file".into(),
                });
            }
        }
        Ok(())
    }

    /// Render `report` in the chosen format and emit it. A table printed on
    /// a terminal whose width `COLUMNS` gives is fitted to that width; a
    /// report going to a file or a pipe never is.
    fn emit_report<R: Render>(&self, report: &R, cautions: &[String]) -> Result<(), CliError> {
        let to_terminal =
            self.output.as_deref().is_none_or(is_standard_stream) && io::stdout().is_terminal();
        let columns = std::env::var("COLUMNS")
            .ok()
            .and_then(|c| c.trim().parse::<usize>().ok());
        cmrr_budget::report::layout::set_table_width(columns.filter(|_| to_terminal));
        self.emit(&report.render(self.format.into()), cautions)
    }

    /// Write the text to the output file, or print it; cautions also go to
    /// standard error when the report goes to a file.
    fn emit(&self, text: &str, cautions: &[String]) -> Result<(), CliError> {
        match &self.output {
            Some(path) if !is_standard_stream(path) => {
                write_file(path, text)?;
                if !quiet() {
                    for caution in cautions {
                        eprintln!("{caution}");
                    }
                }
                Ok(())
            }
            _ => print_out(text),
        }
    }
}

/// 1 when the requirement is missed or the figures do not hold.
fn exit_status(report: &Report) -> u8 {
    if report.verdict.status.fails() {
        MISSED
    } else {
        MET
    }
}

/// Print to standard output; a closed pipe (`cmrr … | head`) is not an
/// error.
fn print_out(text: &str) -> Result<(), CliError> {
    let mut stdout = io::stdout().lock();
    match stdout
        .write_all(text.as_bytes())
        .and_then(|()| stdout.flush())
    {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(CliError::Output {
            path: "standard output".into(),
            problem: format!("cannot write: {e}"),
        }),
    }
}

/// `path` as it will be resolved by the file system: canonical when it
/// exists, else its canonical folder joined with its name; as given when
/// even the folder does not exist (writing there then fails, clearly).
fn resolved(path: &Path) -> PathBuf {
    if let Ok(full) = path.canonicalize() {
        return full;
    }
    let folder = match path.parent() {
        Some(dir) if !dir.as_os_str().is_empty() => dir,
        _ => Path::new("."),
    };
    match (folder.canonicalize(), path.file_name()) {
        (Ok(folder), Some(name)) => folder.join(name),
        _ => path.to_path_buf(),
    }
}

/// Refuse an output path that would overwrite a budget file, anything but
/// a regular file (a device, a FIFO, a folder: never replaced, even with
/// `--force`), or an existing file without `--force`.
fn check_output_path(output: &Path, inputs: &[&Path], force: bool) -> Result<(), CliError> {
    let refuse = |problem: &str| CliError::Output {
        path: output.display().to_string(),
        problem: problem.to_string(),
    };
    let target = resolved(output);
    if inputs.iter().any(|input| resolved(input) == target) {
        return Err(refuse(
            "the output path is the budget file itself; choose another path",
        ));
    }
    match std::fs::symlink_metadata(&target) {
        Ok(meta) if !meta.is_file() => Err(refuse(
            "this is not a regular file (a folder, a device or a pipe); cmrr writes reports only to regular files, and never replaces anything else",
        )),
        Ok(_) if !force => Err(refuse(
            "the output file already exists; add --force to replace it, or choose another path",
        )),
        _ => Ok(()),
    }
}

/// Write through a temporary file beside the target and rename it into
/// place, so a failure never leaves a half-written file.
fn write_file(path: &Path, text: &str) -> Result<(), CliError> {
    let shown = path.display().to_string();
    // Through a link, the file it names is the one replaced.
    let target = resolved(path);
    let path = target.as_path();
    let fail = |e: io::Error| CliError::Output {
        path: shown.clone(),
        problem: format!("cannot write the report: {e}"),
    };
    let directory = match path.parent() {
        Some(dir) if !dir.as_os_str().is_empty() => dir.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path.file_name().ok_or_else(|| CliError::Output {
        path: shown.clone(),
        problem: "not a file path".into(),
    })?;
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
fn check_trial_count(option: &'static str, trials: u64) -> Result<(), CliError> {
    if trials == 0 || trials > MAX_TRIALS {
        return Err(CliError::Option {
            option,
            problem: format!(
                "{trials}: a run takes 1 to {MAX_TRIALS} trials; run several seeds for more"
            ),
        });
    }
    Ok(())
}
