//! Rendering: every report type as a terminal table, CSV or JSON, through
//! one interface, [`Render`]. Renderers render data; they never run an
//! analysis, a Monte Carlo, a corner search or a sweep. The data come from
//! [`crate::verdict`] (the judged budget), [`crate::sweep`],
//! [`crate::montecarlo`] and [`crate::design`].

pub mod compare;
pub mod csv;
pub mod design;
pub mod json;
pub mod layout;
pub mod residue;
pub mod sweep;
pub mod switching;
pub mod table;
pub mod yield_report;

pub use crate::verdict::{
    cautions as cautions_for, BridgeRipple, Check, ContributionKind, ContributionRow, Corner,
    CornerValue, Db, FilteredError, FrequencyResult, JudgedFigure, Report, RequirementOutcome,
    SourceResult, Status, TaredError, TemperatureResult, Totals, Verdict, SCHEMA_VERSION,
};

use serde::Serialize;

/// The formats every report renders to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// Readable tables for a terminal.
    Table,
    /// The versioned JSON report.
    Json,
    /// Rows with units in the headers.
    Csv,
}

/// A report that renders to every [`Format`].
pub trait Render: Serialize {
    /// The report's kind, the `report` field of its JSON: `budget`,
    /// `sweep`, `yield`, `compare`, `size`, `improve` or `trim`.
    const KIND: &'static str;

    /// The report as text for a terminal.
    fn table(&self) -> String;

    /// The report as CSV, units in the headers.
    fn csv(&self) -> String;

    /// The report as pretty-printed JSON, ending in a newline.
    fn json(&self) -> String {
        json::to_json(self, Self::KIND)
    }

    /// The report in `format`.
    fn render(&self, format: Format) -> String {
        match format {
            Format::Table => self.table(),
            Format::Json => self.json(),
            Format::Csv => self.csv(),
        }
    }
}

impl Render for Report {
    const KIND: &'static str = "budget";

    fn table(&self) -> String {
        table::render_table(self)
    }

    fn csv(&self) -> String {
        csv::render_csv(self)
    }
}
