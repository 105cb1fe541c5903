//! The sweep report: totals and every contributor's CMRR over frequency,
//! exact values at the required and interference frequencies, and where the
//! dominant contributor changes; rendered as a table, CSV, JSON or a plot.

use super::{Db, Render, Report, Totals, SCHEMA_VERSION};
use crate::engine::ranking_key;
use crate::model::Budget;
use crate::plot::{plot_sweep, text_chart, PlotError, MAX_CONTRIBUTOR_CURVES};
use crate::quantity::{format_db, format_si};
use crate::sweep::{DominantChange, Sweep, SweepContributor};
use serde::Serialize;
use tabled::builder::Builder;

/// One frequency of the sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepRow {
    /// The frequency, Hz.
    pub frequency_hz: f64,
    /// The chain's CMRR.
    pub cmrr_db: SweepTotals,
    /// Each contributor's CMRR alone, in `contributors` order.
    pub contributors_cmrr_db: Vec<Db>,
    /// The largest contributor here, `name (stage)`; null when none.
    pub dominant: Option<String>,
}

/// The totals at a swept frequency: the linear bound, RSS and nominal (the
/// exact worst corner is searched only at the points the verdict judges).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SweepTotals {
    /// The linear bound.
    pub worst_case: Db,
    /// Systematic part plus the root-sum-square of the random parts.
    pub rss: Db,
    /// Values as given.
    pub nominal: Db,
}

/// A required minimum and what the chain achieves exactly there.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RequiredPoint {
    /// The frequency, Hz.
    pub frequency_hz: f64,
    /// The required minimum CMRR, dB.
    pub required_db: Db,
    /// The chain's CMRR there (as the verdict judges it, at the sweep's
    /// temperature).
    pub cmrr_db: Totals<Db>,
    /// Which total the requirement is judged on.
    pub judged_on: crate::model::Judgement,
    /// The margin of that total over the minimum at the sweep's
    /// temperature, dB.
    pub margin_db: Db,
    /// Whether the minimum is met at the sweep's temperature.
    pub met: bool,
}

/// An interference source and the chain's CMRR at its frequency.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InterferencePoint {
    /// The source's name.
    pub source: String,
    /// Its frequency, Hz.
    pub frequency_hz: f64,
    /// The chain's CMRR there, solved exactly.
    pub cmrr_db: Totals<Db>,
}

/// Everything `cmrr sweep` reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepReport {
    /// Version of the JSON layout (shared with the budget report).
    pub schema_version: u32,
    /// The budget's name.
    pub budget: String,
    /// Lowest frequency, Hz.
    pub from_hz: f64,
    /// Highest frequency, Hz.
    pub to_hz: f64,
    /// Points per decade.
    pub points_per_decade: u32,
    /// The temperature swept at, kelvin; null for the reference.
    pub temperature_k: Option<f64>,
    /// The contributors, the nominal imbalance first.
    pub contributors: Vec<SweepContributor>,
    /// One row per frequency, ascending.
    pub points: Vec<SweepRow>,
    /// The requirement's minima with the exact CMRR at each.
    pub required: Vec<RequiredPoint>,
    /// The interference sources with the exact CMRR at each.
    pub interference: Vec<InterferencePoint>,
    /// Where the dominant contributor changes.
    pub dominant_changes: Vec<DominantChange>,
}

fn totals_db(worst_case: f64, rss: f64, nominal: f64) -> SweepTotals {
    SweepTotals {
        worst_case: Db::from_conversion(worst_case),
        rss: Db::from_conversion(rss),
        nominal: Db::from_conversion(nominal),
    }
}

/// The verdict's check of a minimum CMRR of `minimum_db` at `freq`.
fn minimum_check(verdict: &Report, freq: f64, minimum_db: f64) -> Option<&crate::verdict::Check> {
    verdict
        .judged_points()
        .into_iter()
        .filter(|p| crate::verdict::same_frequency(p.frequency_hz, freq))
        .flat_map(|p| p.requirement.into_iter().flat_map(|o| o.checks.iter()))
        .find(|c| {
            matches!(c.kind, crate::verdict::CheckKind::MinimumCmrr { minimum_db: m } if m.0 == minimum_db)
        })
}

/// Assemble the report of a finished sweep, run `delta_t` kelvin from the
/// reference temperature, with the exact figures at the required and
/// interference frequencies taken from `verdict` (judged at the same
/// temperature).
pub fn build_sweep_report(
    budget: &Budget,
    sweep: &Sweep,
    delta_t: f64,
    verdict: &Report,
) -> SweepReport {
    let points = sweep
        .points
        .iter()
        .map(|p| SweepRow {
            frequency_hz: p.freq_hz,
            cmrr_db: totals_db(p.worst_case, p.rss, p.nominal),
            contributors_cmrr_db: p
                .contributions
                .iter()
                .map(|m| Db::from_conversion(*m))
                .collect(),
            dominant: p.dominant().map(|i| sweep.label(i)),
        })
        .collect();
    let required = budget
        .requirement
        .iter()
        .flat_map(|r| r.min_cmrr.iter())
        .filter_map(|m| {
            let judged_on = budget.requirement.as_ref()?.judged_on;
            let check = minimum_check(verdict, m.frequency_hz, m.cmrr_db)?;
            Some(RequiredPoint {
                frequency_hz: m.frequency_hz,
                required_db: Db(m.cmrr_db),
                cmrr_db: verdict.figures_at(m.frequency_hz)?.0,
                judged_on,
                margin_db: check.margin_db,
                met: check.met,
            })
        })
        .collect();
    let interference = budget
        .interference
        .iter()
        .filter_map(|s| {
            Some(InterferencePoint {
                source: s.name.clone(),
                frequency_hz: s.frequency_hz,
                cmrr_db: verdict.figures_at(s.frequency_hz)?.0,
            })
        })
        .collect();
    SweepReport {
        schema_version: SCHEMA_VERSION,
        budget: budget.name.clone(),
        from_hz: sweep.spec.from_hz,
        to_hz: sweep.spec.to_hz,
        points_per_decade: sweep.spec.per_decade,
        temperature_k: budget
            .temperature
            .filter(|_| delta_t != 0.0)
            .map(|r| r.reference_k + delta_t),
        contributors: sweep.contributors.clone(),
        points,
        required,
        interference,
        dominant_changes: sweep.dominant_changes(),
    }
}

impl Render for SweepReport {
    const KIND: &'static str = "sweep";

    fn table(&self) -> String {
        render_sweep_table(self)
    }

    fn csv(&self) -> String {
        render_sweep_csv(self)
    }
}

/// The sweep as a terminal table, with the exact points and changes after.
pub fn render_sweep_table(report: &SweepReport) -> String {
    let mut out = format!(
        "CMRR sweep: {}\n{} to {}, {} points per decade{}\n",
        report.budget,
        format_si(report.from_hz, "Hz"),
        format_si(report.to_hz, "Hz"),
        report.points_per_decade,
        report
            .temperature_k
            .map_or(String::new(), |k| format!(", at {:.1} °C", k - 273.15))
    );
    let mut table = Builder::default();
    table.push_record([
        "frequency",
        "worst case",
        "RSS",
        "nominal",
        "dominant contributor",
    ]);
    for row in &report.points {
        table.push_record([
            format_si(row.frequency_hz, "Hz"),
            format_db(row.cmrr_db.worst_case.0),
            format_db(row.cmrr_db.rss.0),
            format_db(row.cmrr_db.nominal.0),
            row.dominant.clone().unwrap_or_else(|| "none".into()),
        ]);
    }
    out.push_str(&super::layout::styled(table, 0..4));
    out.push('\n');
    out.push_str(&exact_lines(report));
    out
}

fn frequency_text(freq_hz: f64) -> String {
    if freq_hz == 0.0 {
        "DC".to_string()
    } else {
        format_si(freq_hz, "Hz")
    }
}

fn exact_lines(report: &SweepReport) -> String {
    let mut out = String::new();
    for change in &report.dominant_changes {
        out.push_str(&format!(
            "dominant contributor changes near {}: {} → {}\n",
            format_si(change.near_hz, "Hz"),
            change.from,
            change.to
        ));
    }
    for point in &report.interference {
        out.push_str(&format!(
            "at {} ({}): worst case {}, worst corner {}, RSS {}\n",
            frequency_text(point.frequency_hz),
            point.source,
            format_db(point.cmrr_db.worst_case.0),
            format_db(point.cmrr_db.worst_corner.0),
            format_db(point.cmrr_db.rss.0)
        ));
    }
    for point in &report.required {
        out.push_str(&format!(
            "required at {}: ≥ {}, {} {} at this temperature ({} by {})\n",
            format_si(point.frequency_hz, "Hz"),
            format_db(point.required_db.0),
            point.judged_on.label(),
            format_db(point.cmrr_db.judged(point.judged_on).0),
            if point.met { "met" } else { "MISSED" },
            format_db(point.margin_db.0.abs())
        ));
    }
    out
}

/// The sweep as CSV: one row per frequency, a column per total and per
/// contributor, units in the headers, `inf` for an infinite CMRR.
pub fn render_sweep_csv(report: &SweepReport) -> String {
    let mut header = vec![
        "frequency_hz".to_string(),
        "worst_case_cmrr_db".into(),
        "rss_cmrr_db".into(),
        "nominal_cmrr_db".into(),
    ];
    header.extend(
        report
            .contributors
            .iter()
            .map(|c| super::csv::escape(&format!("cmrr_db: {} ({})", c.name, c.stage))),
    );
    let mut out = header.join(",");
    out.push('\n');
    for row in &report.points {
        let mut fields = vec![
            format!("{}", row.frequency_hz),
            super::csv::db(row.cmrr_db.worst_case),
            super::csv::db(row.cmrr_db.rss),
            super::csv::db(row.cmrr_db.nominal),
        ];
        fields.extend(row.contributors_cmrr_db.iter().map(|d| super::csv::db(*d)));
        out.push_str(&fields.join(","));
        out.push('\n');
    }
    out
}

/// The compact text chart of the worst-case total.
pub fn render_sweep_chart(report: &SweepReport) -> String {
    let points: Vec<(f64, f64)> = report
        .points
        .iter()
        .map(|r| (r.frequency_hz, r.cmrr_db.worst_case.0))
        .collect();
    let required: Vec<(f64, f64)> = report
        .required
        .iter()
        .map(|r| (r.frequency_hz, r.required_db.0))
        .collect();
    let mut out = text_chart(
        &format!("worst-case CMRR: {}", report.budget),
        &points,
        &required,
    );
    out.push_str(&exact_lines(report));
    out
}

/// The sweep as an SVG plot: the totals, the largest contributors, the
/// required minima and the interference frequencies.
pub fn render_sweep_svg(report: &SweepReport) -> Result<String, PlotError> {
    let series = |pick: fn(&SweepRow) -> Db| -> Vec<(f64, f64)> {
        report
            .points
            .iter()
            .map(|r| (r.frequency_hz, pick(r).0))
            .collect()
    };
    // The contributors that come closest to the total somewhere; parts with
    // identical curves (the matched legs of a network) share one curve.
    let mut ranked: Vec<(usize, f64)> = (0..report.contributors.len())
        .map(|i| {
            let best = report
                .points
                .iter()
                .map(|r| r.contributors_cmrr_db[i].0)
                .fold(f64::INFINITY, f64::min);
            (i, best)
        })
        .filter(|(_, best)| best.is_finite())
        .collect();
    ranked.sort_by(|a, b| ranking_key(a.1).total_cmp(&ranking_key(b.1)));
    let same_curve = |a: usize, b: usize| {
        report.points.iter().all(|r| {
            let (x, y) = (r.contributors_cmrr_db[a].0, r.contributors_cmrr_db[b].0);
            x == y || (x - y).abs() < 1e-6
        })
    };
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for (i, _) in ranked {
        match groups.iter_mut().find(|g| same_curve(g[0], i)) {
            Some(group) => group.push(i),
            None => groups.push(vec![i]),
        }
    }
    let contributors = groups
        .into_iter()
        .take(MAX_CONTRIBUTOR_CURVES)
        .map(|group| {
            let first = &report.contributors[group[0]];
            let names: Vec<&str> = group
                .iter()
                .map(|&i| report.contributors[i].name.as_str())
                .collect();
            let label = if group
                .iter()
                .all(|&i| report.contributors[i].stage == first.stage)
            {
                format!("{} ({})", names.join(", "), first.stage)
            } else {
                group
                    .iter()
                    .map(|&i| {
                        format!(
                            "{} ({})",
                            report.contributors[i].name, report.contributors[i].stage
                        )
                    })
                    .collect::<Vec<_>>()
                    .join(", ")
            };
            (
                label,
                report
                    .points
                    .iter()
                    .map(|r| (r.frequency_hz, r.contributors_cmrr_db[group[0]].0))
                    .collect(),
            )
        })
        .collect();
    let required: Vec<(f64, f64)> = report
        .required
        .iter()
        .map(|r| (r.frequency_hz, r.required_db.0))
        .collect();
    let interference: Vec<(f64, String)> = report
        .interference
        .iter()
        .filter(|p| p.frequency_hz > 0.0)
        .map(|p| (p.frequency_hz, format_si(p.frequency_hz, "Hz")))
        .collect();
    plot_sweep(
        &report.budget,
        [
            ("worst case", series(|r| r.cmrr_db.worst_case)),
            ("RSS", series(|r| r.cmrr_db.rss)),
            ("nominal", series(|r| r.cmrr_db.nominal)),
        ],
        contributors,
        &required,
        &interference,
    )
}
