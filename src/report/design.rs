//! Reports of the design commands: sizing, what must change, and trimming.

use super::SCHEMA_VERSION;
use crate::design::{AllocationTable, Sensitivity, Sizing};
use crate::quantity::{format_db, format_share, format_si};
use serde::Serialize;
use tabled::builder::Builder;
use tabled::settings::object::Columns;
use tabled::settings::{Alignment, Style};

fn styled(builder: Builder, numeric_from: usize) -> String {
    let mut table = builder.build();
    table
        .with(Style::rounded())
        .modify(Columns::new(numeric_from..), Alignment::right());
    table.to_string()
}

/// `cmrr size` as JSON.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SizingReport {
    /// Version of the JSON layout.
    pub schema_version: u32,
    /// The budget's name.
    pub budget: String,
    /// `worst case` or the yield target.
    pub goal: String,
    /// The answer.
    #[serde(flatten)]
    pub sizing: Sizing,
}

/// `cmrr size` as a terminal report.
pub fn render_sizing_table(report: &SizingReport) -> String {
    let s = &report.sizing;
    let mut out = format!(
        "Sizing the {} of {} for {}\n",
        s.what, report.budget, report.goal
    );
    if let Some(current) = &s.current {
        out.push_str(&format!("as written: {current}\n"));
    }
    let mut table = Builder::default();
    table.push_record(["setting", "meets", "smallest margin", "yield"]);
    for step in &s.steps {
        table.push_record([
            step.label.clone(),
            if step.meets {
                "yes".into()
            } else {
                "no".into()
            },
            step.margin_db.map_or("—".into(), format_db),
            step.yield_fraction.map_or("—".into(), format_share),
        ]);
    }
    out.push_str(&styled(table, 2));
    out.push('\n');
    match (&s.answer, &s.blocker) {
        (Some(answer), _) => out.push_str(&format!(
            "answer: {}{}\n",
            answer.label,
            answer.margin_db.map_or(String::new(), |m| format!(", margin {}", format_db(m)))
        )),
        (None, Some(b)) => out.push_str(&format!(
            "answer: none — this parameter alone cannot meet the requirement: at {}, the contributors it does not touch already exceed the {} allowed for everything together; the largest is {} ({}) at {} alone: improve it first\n",
            b.at,
            format_db(b.allowed_db),
            b.contributor,
            b.stage,
            format_db(b.cmrr_db)
        )),
        (None, None) => out.push_str("answer: none of the settings tried meets the requirement\n"),
    }
    out
}

/// `cmrr improve` as JSON.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ImproveReport {
    /// Version of the JSON layout.
    pub schema_version: u32,
    /// The budget's name.
    pub budget: String,
    /// Per checked point: each contributor against an equal share.
    pub allocation: Vec<AllocationTable>,
    /// The interference sources, in the order of `gain_db`.
    pub sources: Vec<String>,
    /// What halving each spread buys, best first.
    pub sensitivity: Vec<Sensitivity>,
}

/// `cmrr improve` as a terminal report.
pub fn render_improve_table(report: &ImproveReport) -> String {
    let mut out = format!("What must change: {}\n", report.budget);
    if report.allocation.is_empty() {
        out.push_str("no requirement stated: nothing to allocate\n");
    }
    for table in &report.allocation {
        out.push_str(&format!(
            "\n{}: the requirement allows {} for all contributors together; each gets an equal share\n",
            table.at,
            format_db(table.allowed_db)
        ));
        let mut builder = Builder::default();
        builder.push_record([
            "contributor",
            "stage",
            "value",
            "CMRR alone",
            "allowance",
            "must improve by",
        ]);
        for row in &table.rows {
            builder.push_record([
                row.contributor.clone(),
                row.stage.clone(),
                row.value.clone(),
                format_db(row.cmrr_db),
                format_db(row.allowance_db),
                if row.must_improve_db > 0.0 {
                    format_db(row.must_improve_db)
                } else {
                    "within share".into()
                },
            ]);
        }
        out.push_str(&styled(builder, 3));
        out.push('\n');
    }
    out.push_str(
        "\nworst-case CMRR gained when one spread halves (largest at the tightest source first)\n",
    );
    let mut builder = Builder::default();
    let with_yield = report.sensitivity.iter().any(|r| r.yield_gain.is_some());
    let mut header = vec!["parameter".to_string(), "stage".into(), "value".into()];
    header.extend(report.sources.iter().cloned());
    if with_yield {
        header.push("yield gained".into());
    }
    builder.push_record(header);
    let worth_showing = |r: &&Sensitivity| {
        r.gain_db.iter().any(|g| *g > 0.005) || r.yield_gain.is_some_and(|y| y > 0.0)
    };
    for row in report.sensitivity.iter().filter(worth_showing).take(15) {
        let mut record = vec![row.parameter.clone(), row.stage.clone(), row.value.clone()];
        record.extend(row.gain_db.iter().map(|g| format!("+{g:.2} dB")));
        if with_yield {
            record.push(
                row.yield_gain
                    .map_or("—".into(), |y| format!("{:+.2} %", y * 100.0)),
            );
        }
        builder.push_record(record);
    }
    out.push_str(&styled(builder, 3));
    out.push('\n');
    out
}

/// One source before and after a trim.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrimRow {
    /// The source.
    pub source: String,
    /// Its frequency, Hz.
    pub frequency_hz: f64,
    /// Worst-case CMRR as built, dB.
    pub before_db: f64,
    /// Worst-case CMRR after the trim, at the reference temperature, dB.
    pub after_db: f64,
    /// After the trim, at the worse end of the temperature range, dB.
    pub after_over_temperature_db: Option<f64>,
}

/// `cmrr trim` as JSON.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrimReport {
    /// Version of the JSON layout.
    pub schema_version: u32,
    /// The budget's name.
    pub budget: String,
    /// The trimmed stage.
    pub stage: String,
    /// The trim's resolution as a ratio error.
    pub resolution: f64,
    /// Per interference source.
    pub rows: Vec<TrimRow>,
}

/// `cmrr trim` as a terminal report.
pub fn render_trim_table(report: &TrimReport) -> String {
    let mut out = format!(
        "Trimming the difference stage of {} at DC to ±{} ({})\n",
        report.stage,
        crate::quantity::format_fraction(report.resolution),
        report.budget
    );
    let mut builder = Builder::default();
    builder.push_record([
        "source",
        "frequency",
        "as built",
        "trimmed",
        "trimmed, over temperature",
    ]);
    for row in &report.rows {
        builder.push_record([
            row.source.clone(),
            if row.frequency_hz == 0.0 {
                "DC".into()
            } else {
                format_si(row.frequency_hz, "Hz")
            },
            format_db(row.before_db),
            format_db(row.after_db),
            row.after_over_temperature_db.map_or("—".into(), format_db),
        ]);
    }
    out.push_str(&styled(builder, 2));
    out.push_str("\nThe trim nulls the resistors' ratio error at DC; what remains is its resolution, the resistors' drift over temperature, and every frequency-dependent contributor, which a DC trim does not touch.\n");
    out
}

/// Assemble `cmrr size`'s report.
pub fn sizing_report(budget: &str, goal: String, sizing: Sizing) -> SizingReport {
    SizingReport {
        schema_version: SCHEMA_VERSION,
        budget: budget.into(),
        goal,
        sizing,
    }
}

/// Assemble `cmrr improve`'s report.
pub fn improve_report(
    budget: &str,
    sources: Vec<String>,
    allocation: Vec<AllocationTable>,
    sensitivity: Vec<Sensitivity>,
) -> ImproveReport {
    ImproveReport {
        schema_version: SCHEMA_VERSION,
        budget: budget.into(),
        allocation,
        sources,
        sensitivity,
    }
}

/// Assemble `cmrr trim`'s report.
pub fn trim_report(budget: &str, stage: &str, resolution: f64, rows: Vec<TrimRow>) -> TrimReport {
    TrimReport {
        schema_version: SCHEMA_VERSION,
        budget: budget.into(),
        stage: stage.into(),
        resolution,
        rows,
    }
}
