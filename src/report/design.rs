//! Reports of the design commands: sizing, what must change, and trimming.

use super::csv::{escape, number};
use super::layout::styled;
use super::{Render, SCHEMA_VERSION};
use crate::design::{AllocationTable, Sensitivity, Sizing, TrimMethod, TrimRow};
use crate::quantity::{format_db, format_share, format_si};
use serde::Serialize;
use tabled::builder::Builder;

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
            match (step.meets, step.holds) {
                (true, _) => "yes".into(),
                (false, true) => "no".into(),
                (false, false) => "no: does not hold (headroom)".into(),
            },
            step.margin_db.map_or("—".into(), format_db),
            step.yield_fraction.map_or("—".into(), format_share),
        ]);
    }
    out.push_str(&styled(table, 2..usize::MAX));
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
    /// The verdict on the budget as written.
    pub status: crate::verdict::Status,
    /// Its headroom findings: while there are any, the figures below do
    /// not hold.
    pub headroom: Vec<crate::engine::HeadroomFinding>,
    /// What halving each spread buys, best first.
    pub sensitivity: Vec<Sensitivity>,
    /// Switching sources left out of the allocation and the ranking (their
    /// contributors are in `cmrr budget` and `cmrr residue`).
    pub not_ranked: Vec<String>,
}

/// `cmrr improve` as a terminal report.
pub fn render_improve_table(report: &ImproveReport) -> String {
    let mut out = format!("What must change: {}\n", report.budget);
    for finding in &report.headroom {
        out.push_str(&format!("\n{}\n", super::table::headroom_warning(finding)));
    }
    if !report.headroom.is_empty() {
        out.push_str("the design as written does not hold: clear the headroom findings first; the figures below are small-signal figures only\n");
    }
    if !report.not_ranked.is_empty() {
        out.push_str(&format!(
            "not ranked here: the switching source(s) {}; their contributors are in `cmrr budget` and `cmrr residue`\n",
            super::yield_report::quoted_list(&report.not_ranked)
        ));
    }
    if report.allocation.is_empty() {
        out.push_str("no requirement stated: nothing to allocate\n");
    }
    for table in &report.allocation {
        out.push_str(&format!(
            "\n{} ({}): the requirement allows {} for all contributors together; each gets an equal share of the worst-case sum\n",
            table.at,
            table.temperature_k.map_or("reference temperature".into(), super::table::celsius),
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
        out.push_str(&styled(builder, 3..usize::MAX));
        out.push('\n');
    }
    out.push_str(
        "\nCMRR gained when one spread halves, as the requirement judges it (its total, at the temperature where it is worst; largest at the tightest source first)\n",
    );
    let mut builder = Builder::default();
    let with_yield = report
        .sensitivity
        .iter()
        .any(|r| r.yield_gain_points.is_some());
    let mut header = vec!["parameter".to_string(), "stage".into(), "value".into()];
    header.extend(report.sources.iter().cloned());
    if with_yield {
        header.push("yield gained (percentage points)".into());
    }
    builder.push_record(header);
    let worth_showing = |r: &&Sensitivity| {
        r.gain_db.iter().any(|g| *g > 0.005) || r.yield_gain_points.is_some_and(|y| y > 0.0)
    };
    let shown: Vec<&Sensitivity> = report.sensitivity.iter().filter(worth_showing).collect();
    for row in shown.iter().take(SENSITIVITY_ROWS) {
        let mut record = vec![row.parameter.clone(), row.stage.clone(), row.value.clone()];
        record.extend(row.gain_db.iter().map(|g| format!("+{g:.2} dB")));
        if with_yield {
            record.push(
                row.yield_gain_points
                    .map_or("—".into(), |y| format!("{y:+.2} points")),
            );
        }
        builder.push_record(record);
    }
    out.push_str(&styled(builder, 3..usize::MAX));
    out.push('\n');
    let hidden = report.sensitivity.len() - shown.len().min(SENSITIVITY_ROWS);
    if hidden > 0 {
        out.push_str(&format!(
            "{} of {} parameters shown: the rest gain less than 0.01 dB or fall below the first {SENSITIVITY_ROWS}; all are in the JSON and CSV\n",
            shown.len().min(SENSITIVITY_ROWS),
            report.sensitivity.len()
        ));
    }
    out
}

/// How many rows the halving table prints.
const SENSITIVITY_ROWS: usize = 15;

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
    /// How the stage is trimmed: `null` or `ratio`.
    pub method: TrimMethod,
    /// The total compared (the requirement's, worst case by default).
    pub judged_on: crate::model::Judgement,
    /// Per interference source.
    pub rows: Vec<TrimRow>,
}

/// `cmrr trim` as a terminal report.
pub fn render_trim_table(report: &TrimReport) -> String {
    let mut out = format!(
        "Trimming the difference stage of {} at DC to ±{} ({})\n{}\n",
        report.stage,
        crate::quantity::format_fraction(report.resolution),
        report.budget,
        report.method.explanation()
    );
    let mut builder = Builder::default();
    let judged = report.judged_on.label();
    builder.push_record([
        "source".to_string(),
        "frequency".into(),
        format!("as built ({judged}, reference)"),
        format!("trimmed ({judged}, reference)"),
        format!("trimmed ({judged}, worse end of the range)"),
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
    out.push_str(&styled(builder, 2..usize::MAX));
    out.push('\n');
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
    verdict: &crate::verdict::Report,
    sources: Vec<String>,
    allocation: Vec<AllocationTable>,
    sensitivity: Vec<Sensitivity>,
) -> ImproveReport {
    ImproveReport {
        schema_version: SCHEMA_VERSION,
        budget: verdict.budget.clone(),
        allocation,
        sources,
        status: verdict.verdict.status,
        headroom: verdict.headroom.clone(),
        sensitivity,
        not_ranked: verdict.switching.iter().map(|s| s.source.clone()).collect(),
    }
}

/// Assemble `cmrr trim`'s report.
pub fn trim_report(
    budget: &str,
    stage: &str,
    (resolution, method): (f64, TrimMethod),
    judged_on: crate::model::Judgement,
    rows: Vec<TrimRow>,
) -> TrimReport {
    TrimReport {
        schema_version: SCHEMA_VERSION,
        budget: budget.into(),
        stage: stage.into(),
        resolution,
        method,
        judged_on,
        rows,
    }
}

impl Render for SizingReport {
    const KIND: &'static str = "size";

    fn table(&self) -> String {
        render_sizing_table(self)
    }

    /// One row per setting tried.
    fn csv(&self) -> String {
        let mut out =
            String::from("setting,setting_unit,label,meets,holds,margin_db,yield,answer\n");
        let answer = self.sizing.answer.as_ref().map(|a| a.setting);
        for step in &self.sizing.steps {
            let fields = [
                number(step.setting),
                self.sizing.setting_unit.to_string(),
                escape(&step.label),
                step.meets.to_string(),
                step.holds.to_string(),
                step.margin_db
                    .map(|m| format!("{m:.6}"))
                    .unwrap_or_default(),
                step.yield_fraction.map(number).unwrap_or_default(),
                (answer == Some(step.setting)).to_string(),
            ];
            out.push_str(&fields.join(","));
            out.push('\n');
        }
        out
    }
}

impl Render for ImproveReport {
    const KIND: &'static str = "improve";

    fn table(&self) -> String {
        render_improve_table(self)
    }

    /// The allocation rows, then the halving rows (one per parameter and
    /// source).
    fn csv(&self) -> String {
        let mut out = String::from("table,at,temperature_k,contributor,stage,value,cmrr_db,allowance_db,must_improve_db,gain_db,yield_gain_points\n");
        for table in &self.allocation {
            for row in &table.rows {
                let fields = [
                    "allocation".to_string(),
                    escape(&table.at),
                    table.temperature_k.map(number).unwrap_or_default(),
                    escape(&row.contributor),
                    escape(&row.stage),
                    escape(&row.value),
                    format!("{:.6}", row.cmrr_db),
                    format!("{:.6}", row.allowance_db),
                    format!("{:.6}", row.must_improve_db),
                    String::new(),
                    String::new(),
                ];
                out.push_str(&fields.join(","));
                out.push('\n');
            }
        }
        for row in &self.sensitivity {
            for (source, gain) in self.sources.iter().zip(&row.gain_db) {
                let fields = [
                    "halving".to_string(),
                    escape(source),
                    String::new(),
                    escape(&row.parameter),
                    escape(&row.stage),
                    escape(&row.value),
                    String::new(),
                    String::new(),
                    String::new(),
                    format!("{gain:.6}"),
                    row.yield_gain_points.map(number).unwrap_or_default(),
                ];
                out.push_str(&fields.join(","));
                out.push('\n');
            }
        }
        out
    }
}

impl Render for TrimReport {
    const KIND: &'static str = "trim";

    fn table(&self) -> String {
        render_trim_table(self)
    }

    /// One row per interference source.
    fn csv(&self) -> String {
        let mut out = String::from("source,frequency_hz,method,judged_on,before_cmrr_db,after_cmrr_db,after_over_temperature_cmrr_db\n");
        let method = match self.method {
            TrimMethod::Null => "null",
            TrimMethod::Ratio => "ratio",
        };
        for row in &self.rows {
            let fields = [
                escape(&row.source),
                method.to_string(),
                number(row.frequency_hz),
                self.judged_on.label().replace(' ', "_"),
                super::csv::db(super::Db(row.before_db)),
                super::csv::db(super::Db(row.after_db)),
                row.after_over_temperature_db
                    .map(|d| super::csv::db(super::Db(d)))
                    .unwrap_or_default(),
            ];
            out.push_str(&fields.join(","));
            out.push('\n');
        }
        out
    }
}
