//! Several designs side by side: for each interference source, each
//! design's total CMRR, error, margin and dominant contributor, in the
//! order the designs were given.

use super::table::celsius;
use super::{Db, Render, Report, Status, SCHEMA_VERSION};
use crate::model::{describe_volts, Judgement};
use crate::quantity::{format_db, format_si, AmplitudeForm};
use serde::Serialize;
use tabled::builder::Builder;

/// One design in a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Design {
    /// Its label: the budget's name, with the file added when two names
    /// are the same.
    pub label: String,
    /// The budget file.
    pub file: String,
    /// Its verdict: met, missed, does not hold (headroom) or no
    /// requirement.
    pub status: Status,
}

/// One design's figures for one source: the figure its verdict judges,
/// at the temperature where it is worst, beside the margin judged on it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DesignFigures {
    /// The total judged (worst case unless the budget says otherwise).
    pub judged_on: Judgement,
    /// Where it is worst, kelvin; null at the reference temperature.
    pub temperature_k: Option<f64>,
    /// The judged CMRR.
    pub cmrr_db: Db,
    /// The judged error referred to the input, volts in `amplitude_form`.
    pub error_rti_v: f64,
    /// `rms`, `peak`, `peak_to_peak`, or null for DC.
    pub amplitude_form: Option<AmplitudeForm>,
    /// The requirement's margin, when a requirement applies.
    pub margin_db: Option<Db>,
    /// Whether the requirement is met, when one applies.
    pub met: Option<bool>,
    /// The largest contributor, `name (stage)`.
    pub dominant: Option<String>,
}

/// One source across the designs: an interference source with each
/// design's [`DesignFigures`], or a switching source with its
/// [`SwitchingFigures`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompareRow<F = DesignFigures> {
    /// The source's name.
    pub source: String,
    /// Its frequency (a switching source's switching frequency), Hz.
    pub frequency_hz: f64,
    /// One entry per design, in design order; null where a design has no
    /// such source.
    pub designs: Vec<Option<F>>,
}

impl<F: Clone> CompareRow<F> {
    /// Put design `index`'s figures in the row of `source` at
    /// `frequency_hz` among `rows`, starting a row when there is none.
    fn place(
        rows: &mut Vec<CompareRow<F>>,
        (source, frequency_hz): (&str, f64),
        (index, designs): (usize, usize),
        figures: F,
    ) {
        let same = |row: &CompareRow<F>| {
            row.source == source
                && (row.frequency_hz - frequency_hz).abs() <= 1e-9 * frequency_hz.max(1.0)
        };
        let at = match rows.iter().position(same) {
            Some(at) => at,
            None => {
                rows.push(CompareRow {
                    source: source.to_string(),
                    frequency_hz,
                    designs: vec![None; designs],
                });
                rows.len() - 1
            }
        };
        rows[at].designs[index] = Some(figures);
    }
}

/// Everything `cmrr compare` reports.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompareReport {
    /// Version of the JSON layout (shared with the budget report).
    pub schema_version: u32,
    /// The designs, in the order given.
    pub designs: Vec<Design>,
    /// One row per interference source (matched by name and frequency), in
    /// order of first appearance.
    pub rows: Vec<CompareRow>,
    /// One row per switching source (matched by name and frequency), in
    /// order of first appearance.
    pub switching_rows: Vec<CompareRow<SwitchingFigures>>,
}

/// One design's residue for one switching source, as its verdict judges it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SwitchingFigures {
    /// The total judged.
    pub judged_on: Judgement,
    /// Where it is worst, kelvin; null at the reference temperature.
    pub temperature_k: Option<f64>,
    /// What the limit is compared with (`peak after blanking`, …).
    pub measure: &'static str,
    /// The judged residue, volts referred to the input.
    pub residue_rti_v: f64,
    /// The settling times at the judged temperature (every total; the
    /// judged one is `judged_on`'s); null without a band.
    pub settling: Option<crate::verdict::Settling>,
    /// The requirement's margin, when a limit applies.
    pub margin_db: Option<Db>,
    /// Whether it is met, when a limit applies.
    pub met: Option<bool>,
    /// The largest contributor, `name (stage)`.
    pub dominant: Option<String>,
}

/// The designs' switching sources side by side.
fn switching_rows(reports: &[(String, &Report)]) -> Vec<CompareRow<SwitchingFigures>> {
    let mut rows = Vec::new();
    for (index, (_, report)) in reports.iter().enumerate() {
        for s in &report.switching {
            let figures = s
                .at_temperature
                .as_ref()
                .filter(|_| s.judged_temperature_k.is_some())
                .unwrap_or(&s.reference);
            let judged = SwitchingFigures {
                judged_on: s.judged_on,
                temperature_k: s.judged_temperature_k,
                measure: s.measure,
                residue_rti_v: s.judged_rti_v,
                settling: figures.settling.clone(),
                margin_db: s.requirement.as_ref().map(|r| r.margin_db),
                met: s.requirement.as_ref().map(|r| r.met),
                dominant: figures
                    .contributions
                    .first()
                    .map(|c| format!("{} ({})", c.name, c.stage)),
            };
            CompareRow::place(
                &mut rows,
                (&s.source, s.frequency_hz),
                (index, reports.len()),
                judged,
            );
        }
    }
    rows
}

/// Labels for the designs: budget names, made unique with the file name.
pub fn design_labels(reports: &[(String, &Report)]) -> Vec<Design> {
    reports
        .iter()
        .map(|(file, report)| {
            let clash = reports
                .iter()
                .filter(|(_, r)| r.budget == report.budget)
                .count()
                > 1;
            Design {
                label: if clash {
                    format!("{} ({file})", report.budget)
                } else {
                    report.budget.clone()
                },
                file: file.clone(),
                status: report.verdict.status,
            }
        })
        .collect()
}

/// Put the designs' budget reports side by side.
pub fn build_compare_report(reports: &[(String, &Report)]) -> CompareReport {
    let mut rows: Vec<CompareRow> = Vec::new();
    for (index, (_, report)) in reports.iter().enumerate() {
        let points = report.judged_points();
        for (result, point) in report.results.iter().zip(&points) {
            let figures = DesignFigures {
                judged_on: result.judged.on,
                temperature_k: result.judged.temperature_k,
                cmrr_db: result.judged.cmrr_db,
                error_rti_v: result.judged.error_rti_v.unwrap_or(0.0),
                amplitude_form: result.amplitude_form,
                margin_db: result.requirement.as_ref().map(|r| r.margin_db),
                met: result.requirement.as_ref().map(|r| r.met),
                dominant: point
                    .contributions
                    .first()
                    .map(|c| format!("{} ({})", c.name, c.stage)),
            };
            CompareRow::place(
                &mut rows,
                (&result.source, result.frequency_hz),
                (index, reports.len()),
                figures,
            );
        }
    }
    CompareReport {
        schema_version: SCHEMA_VERSION,
        designs: design_labels(reports),
        rows,
        switching_rows: switching_rows(reports),
    }
}

/// A margin as the comparison prints it.
fn margin_text(margin: Option<Db>, met: Option<bool>, status: Status) -> String {
    match (margin, met, status) {
        (_, _, Status::DoesNotHold) => "does not hold (headroom)".into(),
        (Some(m), Some(true), _) => format!("met by {}", format_db(m.0)),
        (Some(m), _, _) => format!("MISSED by {}", format_db(-m.0)),
        _ => "no requirement".into(),
    }
}

/// Where a judged figure sits, as the comparison prints it.
fn judged_text(on: Judgement, temperature_k: Option<f64>) -> String {
    format!(
        "{}, {}",
        on.label(),
        temperature_k.map_or("reference".into(), celsius)
    )
}

/// The comparison as terminal tables, one per source.
pub fn render_compare_table(report: &CompareReport) -> String {
    let mut out = String::from(
        "CMRR comparison: each design's judged figure, at the temperature where it is worst\n",
    );
    for (i, design) in report.designs.iter().enumerate() {
        out.push_str(&format!(
            "  {}. {} ({}): {}\n",
            i + 1,
            design.label,
            design.file,
            match design.status {
                Status::Met => "requirement met",
                Status::Missed => "requirement MISSED",
                Status::DoesNotHold =>
                    "DOES NOT HOLD: a node leaves its range (headroom), the figures do not apply",
                Status::NoRequirement => "no requirement stated",
            }
        ));
    }
    for row in &report.rows {
        let frequency = if row.frequency_hz == 0.0 {
            "DC".to_string()
        } else {
            format_si(row.frequency_hz, "Hz")
        };
        let title = format!("{} at {}", row.source, frequency);
        let header = [
            "judged on",
            "CMRR",
            "error RTI",
            "margin",
            "dominant contributor",
        ];
        out.push_str(&side_by_side(
            &report.designs,
            &title,
            header,
            row,
            |f, design| {
                [
                    judged_text(f.judged_on, f.temperature_k),
                    format_db(f.cmrr_db.0),
                    describe_volts(f.error_rti_v, f.amplitude_form),
                    margin_text(f.margin_db, f.met, design.status),
                    f.dominant.clone().unwrap_or_else(|| "none".into()),
                ]
            },
        ));
    }
    for row in &report.switching_rows {
        let title = format!(
            "{} (switching at {})",
            row.source,
            format_si(row.frequency_hz, "Hz")
        );
        let header = [
            "judged on",
            "residue RTI",
            "settles after rising / falling edge",
            "margin",
            "dominant contributor",
        ];
        out.push_str(&side_by_side(
            &report.designs,
            &title,
            header,
            row,
            |f, design| {
                [
                    judged_text(f.judged_on, f.temperature_k),
                    format!("{} {}", format_si(f.residue_rti_v, "V"), f.measure),
                    f.settling.as_ref().map_or("no band".into(), |t| {
                        super::switching::settling_pair(t, f.judged_on)
                    }),
                    margin_text(f.margin_db, f.met, design.status),
                    f.dominant.clone().unwrap_or_else(|| "none".into()),
                ]
            },
        ));
    }
    out
}

/// One source's table: a line per design, its cells from `cells` (dashes
/// where the design has no such source).
fn side_by_side<F>(
    designs: &[Design],
    title: &str,
    header: [&str; 5],
    row: &CompareRow<F>,
    cells: impl Fn(&F, &Design) -> [String; 5],
) -> String {
    let mut table = Builder::default();
    table.push_record(std::iter::once("design").chain(header));
    for (design, figures) in designs.iter().zip(&row.designs) {
        let cells = match figures {
            Some(f) => cells(f, design),
            None => ["—", "—", "—", "no such source", "—"].map(String::from),
        };
        table.push_record(std::iter::once(design.label.clone()).chain(cells));
    }
    format!("\n{title}\n{}\n", super::layout::styled(table, 2..4))
}

/// The comparison as CSV: one row per source and design.
pub fn render_compare_csv(report: &CompareReport) -> String {
    let mut out = String::from(
        "source,frequency_hz,design,status,judged_on,temperature_k,cmrr_db,error_rti_v,amplitude_form,margin_db,met,dominant\n",
    );
    for row in &report.rows {
        for (design, figures) in report.designs.iter().zip(&row.designs) {
            let Some(f) = figures else { continue };
            let fields = [
                super::csv::escape(&row.source),
                format!("{}", row.frequency_hz),
                super::csv::escape(&design.label),
                status_name(design.status).to_string(),
                f.judged_on.label().replace(' ', "_"),
                f.temperature_k.map(super::csv::number).unwrap_or_default(),
                super::csv::db(f.cmrr_db),
                format!("{}", f.error_rti_v),
                f.amplitude_form
                    .map_or("dc".into(), |a| a.name().to_string()),
                f.margin_db.map(super::csv::db).unwrap_or_default(),
                f.met.map(|m| m.to_string()).unwrap_or_default(),
                super::csv::escape(f.dominant.as_deref().unwrap_or("")),
            ];
            out.push_str(&fields.join(","));
            out.push('\n');
        }
    }
    // Switching sources: no CMRR; the judged residue as the error, with
    // `switching` as its form.
    for row in &report.switching_rows {
        for (design, figures) in report.designs.iter().zip(&row.designs) {
            let Some(f) = figures else { continue };
            let fields = [
                super::csv::escape(&row.source),
                format!("{}", row.frequency_hz),
                super::csv::escape(&design.label),
                status_name(design.status).to_string(),
                f.judged_on.label().replace(' ', "_"),
                f.temperature_k.map(super::csv::number).unwrap_or_default(),
                String::new(),
                format!("{}", f.residue_rti_v),
                "switching".into(),
                f.margin_db.map(super::csv::db).unwrap_or_default(),
                f.met.map(|m| m.to_string()).unwrap_or_default(),
                super::csv::escape(f.dominant.as_deref().unwrap_or("")),
            ];
            out.push_str(&fields.join(","));
            out.push('\n');
        }
    }
    out
}

/// A verdict status as JSON and CSV name it.
pub(crate) fn status_name(status: Status) -> &'static str {
    match status {
        Status::Met => "met",
        Status::Missed => "missed",
        Status::DoesNotHold => "does_not_hold",
        Status::NoRequirement => "no_requirement",
    }
}

impl Render for CompareReport {
    const KIND: &'static str = "compare";

    fn table(&self) -> String {
        render_compare_table(self)
    }

    fn csv(&self) -> String {
        render_compare_csv(self)
    }
}
