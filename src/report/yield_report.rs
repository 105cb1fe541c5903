//! Rendering the production-spread report of `cmrr yield`.

use super::table::headroom_warning;
use super::Render;
use crate::model::describe_volts;
use crate::montecarlo::production::{YieldFigure, YieldReport};
use crate::montecarlo::{TemperatureMode, YieldRun};
use crate::quantity::{format_db, format_share, format_si};
use crate::verdict::Status;
use tabled::builder::Builder;

impl Render for YieldReport {
    const KIND: &'static str = "yield";

    fn table(&self) -> String {
        render_yield_table(self)
    }

    fn csv(&self) -> String {
        render_yield_csv(self)
    }
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
    for finding in &report.headroom {
        out.push_str(&format!("\n{}\n", headroom_warning(finding)));
    }
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
    out.push_str("\nCMRR that the given share of units falls below\n");
    out.push_str(&super::layout::styled(table, 0..8));
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
    out.push_str("\nerror referred to the input that the given share of units stays under\n");
    out.push_str(&super::layout::styled(table, 1..5));
    out.push('\n');
    if report.sources.iter().any(|s| s.error_as_read_v.is_some()) {
        let mut table = Builder::default();
        table.push_record(["source", "median error", "95 %", "99 %", "99.9 %"]);
        for s in &report.sources {
            let Some(read) = &s.error_as_read_v else {
                continue;
            };
            let v = |x: f64| describe_volts(x, s.amplitude_form);
            table.push_record([
                format!("{} ({})", s.source, frequency_text(s.frequency_hz)),
                v(read.p50),
                v(read.p95),
                v(read.p99),
                v(read.p99_9),
            ]);
        }
        out.push_str("\nthe same in the reading (through the bridge, after the digital filter), as the limits judge it\n");
        out.push_str(&super::layout::styled(table, 1..5));
        out.push('\n');
    }
    match (&report.overall_yield, report.status) {
        (Some(y), Status::DoesNotHold) => out.push_str(&format!(
            "\nyield against the whole requirement: {}: the figures do not hold (headroom findings at nominal values), so no unit counts as passing\n",
            percent(y)
        )),
        (Some(y), _) => out.push_str(&format!(
            "\nyield against the whole requirement: {}\n",
            percent(y)
        )),
        (None, Status::DoesNotHold) => out.push_str(
            "\nno requirement stated; the figures do not hold (headroom findings at nominal values)\n",
        ),
        (None, _) => out.push_str("\nno requirement stated: no yield\n"),
    }
    if !report.not_counted.is_empty() {
        out.push_str(&format!(
            "not counted in the yield: the switching source(s) {}; their residues are judged at nominal values and the corners (`cmrr budget`, `cmrr residue`)\n",
            quoted_list(&report.not_counted)
        ));
    }
    if !report.tared_not_counted.is_empty() {
        out.push_str(&format!(
            "not counted in the yield: the limit of the tared source(s) {}; what the tare leaves is judged on the linear bound and a corner search (`cmrr budget`), and the error percentiles above are of the offset before the tare\n",
            quoted_list(&report.tared_not_counted)
        ));
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

/// Names in backquotes, comma-separated.
pub(crate) fn quoted_list(names: &[String]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}
