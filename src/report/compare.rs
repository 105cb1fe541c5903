//! Several designs side by side: for each interference source, each
//! design's total CMRR, error, margin and dominant contributor, in the
//! order the designs were given.

use super::{Db, Report, SCHEMA_VERSION};
use crate::model::describe_volts;
use crate::quantity::{format_db, format_si, AmplitudeForm};
use serde::Serialize;
use tabled::builder::Builder;
use tabled::settings::object::Columns;
use tabled::settings::{Alignment, Style};

/// One design in a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Design {
    /// Its label: the budget's name, with the file added when two names
    /// are the same.
    pub label: String,
    /// The budget file.
    pub file: String,
}

/// One design's figures for one source.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DesignFigures {
    /// Worst-case CMRR.
    pub cmrr_db: Db,
    /// Worst-case error referred to the input, volts in `amplitude_form`.
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

/// One interference source across the designs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompareRow {
    /// The source's name.
    pub source: String,
    /// Its frequency, Hz.
    pub frequency_hz: f64,
    /// One entry per design, in design order; null where a design has no
    /// such source.
    pub designs: Vec<Option<DesignFigures>>,
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
            }
        })
        .collect()
}

/// Put the designs' budget reports side by side.
pub fn build_compare_report(reports: &[(String, &Report)]) -> CompareReport {
    let mut rows: Vec<CompareRow> = Vec::new();
    for (index, (_, report)) in reports.iter().enumerate() {
        for result in &report.results {
            let figures = DesignFigures {
                cmrr_db: result.cmrr_db.worst_case,
                error_rti_v: result.error_rti_v.worst_case,
                amplitude_form: result.amplitude_form,
                margin_db: result.requirement.as_ref().map(|r| r.margin_db),
                met: result.requirement.as_ref().map(|r| r.met),
                dominant: result
                    .contributions
                    .first()
                    .map(|c| format!("{} ({})", c.name, c.stage)),
            };
            let same = |row: &CompareRow| {
                row.source == result.source
                    && (row.frequency_hz - result.frequency_hz).abs()
                        <= 1e-9 * result.frequency_hz.max(1.0)
            };
            let row = match rows.iter().position(same) {
                Some(at) => &mut rows[at],
                None => {
                    rows.push(CompareRow {
                        source: result.source.clone(),
                        frequency_hz: result.frequency_hz,
                        designs: vec![None; reports.len()],
                    });
                    rows.last_mut().expect("just pushed")
                }
            };
            row.designs[index] = Some(figures);
        }
    }
    CompareReport {
        schema_version: SCHEMA_VERSION,
        designs: design_labels(reports),
        rows,
    }
}

/// The comparison as terminal tables, one per source.
pub fn render_compare_table(report: &CompareReport) -> String {
    let mut out = String::from("CMRR comparison\n");
    for (i, design) in report.designs.iter().enumerate() {
        out.push_str(&format!(
            "  {}. {} ({})\n",
            i + 1,
            design.label,
            design.file
        ));
    }
    for row in &report.rows {
        let frequency = if row.frequency_hz == 0.0 {
            "DC".to_string()
        } else {
            format_si(row.frequency_hz, "Hz")
        };
        out.push_str(&format!("\n{} at {}\n", row.source, frequency));
        let mut table = Builder::default();
        table.push_record([
            "design",
            "CMRR (worst case)",
            "error RTI (worst case)",
            "margin",
            "dominant contributor",
        ]);
        for (design, figures) in report.designs.iter().zip(&row.designs) {
            match figures {
                Some(f) => table.push_record([
                    design.label.clone(),
                    format_db(f.cmrr_db.0),
                    describe_volts(f.error_rti_v, f.amplitude_form),
                    match (f.margin_db, f.met) {
                        (Some(m), Some(true)) => format!("met by {}", format_db(m.0)),
                        (Some(m), _) => format!("MISSED by {}", format_db(-m.0)),
                        _ => "no requirement".into(),
                    },
                    f.dominant.clone().unwrap_or_else(|| "none".into()),
                ]),
                None => table.push_record([
                    design.label.clone(),
                    "—".into(),
                    "—".into(),
                    "no such source".into(),
                    "—".into(),
                ]),
            }
        }
        let mut table = table.build();
        table
            .with(Style::rounded())
            .modify(Columns::new(1..3), Alignment::right());
        out.push_str(&table.to_string());
        out.push('\n');
    }
    out
}

/// The comparison as CSV: one row per source and design.
pub fn render_compare_csv(report: &CompareReport) -> String {
    let mut out = String::from(
        "source,frequency_hz,design,cmrr_db,error_rti_v,amplitude_form,margin_db,met,dominant\n",
    );
    for row in &report.rows {
        for (design, figures) in report.designs.iter().zip(&row.designs) {
            let Some(f) = figures else { continue };
            let fields = [
                super::csv::escape(&row.source),
                format!("{}", row.frequency_hz),
                super::csv::escape(&design.label),
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
    out
}
