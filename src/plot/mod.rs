//! Plots: CMRR against frequency as SVG in the tool's own style, and a
//! compact text chart for the terminal.
//!
//! Every plot shares [`style`]: a log frequency axis, CMRR in dB upward,
//! the totals drawn heavy in the first colours, contributors thin in muted
//! ones, required minima as downward triangles, interference frequencies as
//! dotted verticals.

mod style;
mod svg;
pub mod terminal;
mod time;

pub use style::MAX_CONTRIBUTOR_CURVES;
pub use svg::{plot_histogram, plot_overlay, plot_sweep, OverlaySeries, PlotError};
pub use terminal::text_chart;
pub use time::{plot_residue, ResiduePlot, TimeCurve};
