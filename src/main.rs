//! `cmrr`: the command-line edge. Parses arguments, calls the library,
//! renders, writes, and maps the outcome to an exit status:
//! 0 requirement met (or none stated), 1 requirement missed, 2 bad input or
//! usage.

use clap::{Parser, Subcommand, ValueEnum};
use cmrr_budget::budget::load_budget;
use cmrr_budget::report::{
    build_report, csv::render_csv, json::render_json, table::render_table, Report,
};
use std::io::{self, Write};
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
        /// Output format.
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
        /// Write the report to this file instead of standard output.
        #[arg(short = 'o', long = "output", value_name = "PATH")]
        output: Option<PathBuf>,
        /// Replace the output file if it already exists.
        #[arg(long)]
        force: bool,
    },
    /// Validate a budget file without computing it.
    Check {
        /// The budget file (YAML).
        file: PathBuf,
    },
}

#[derive(Debug, Clone, Copy, ValueEnum)]
enum Format {
    /// Readable tables for a terminal.
    Table,
    /// The versioned JSON report (see README).
    Json,
    /// One row per contributor and total, units in the headers.
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
        Command::Check { file } => {
            let budget = load_budget(&file).map_err(|e| e.to_string())?;
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
        Command::Budget {
            file,
            format,
            output,
            force,
        } => {
            if let Some(output) = &output {
                check_output_path(output, &file, force)?;
            }
            let budget = load_budget(&file).map_err(|e| e.to_string())?;
            let report = build_report(&budget).map_err(|e| format!("{}: {e}", file.display()))?;
            let text = match format {
                Format::Table => render_table(&report),
                Format::Json => render_json(&report),
                Format::Csv => render_csv(&report),
            };
            match &output {
                Some(path) => {
                    write_file(path, &text)?;
                    for caution in &report.cautions {
                        eprintln!("{caution}");
                    }
                }
                None => print_out(&text)?,
            }
            Ok(exit_status(&report))
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

/// Refuse an output path that would overwrite the budget file itself, or an
/// existing file without `--force`.
fn check_output_path(output: &Path, input: &Path, force: bool) -> Result<(), String> {
    let same = match (output.canonicalize(), input.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    };
    if same {
        return Err(format!(
            "{}: the output path is the budget file itself; choose another path with -o",
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
/// place, so a failure never leaves a half-written report.
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
