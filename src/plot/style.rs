//! The tool's plot style: one palette, one set of sizes, shared by every
//! plot.

use plotters::style::RGBColor;

/// Canvas size in pixels.
pub const SIZE: (u32, u32) = (960, 600);
/// Font family for every label.
pub const FONT: &str = "sans-serif";
/// Title size.
pub const TITLE_SIZE: u32 = 22;
/// Axis label and legend size.
pub const LABEL_SIZE: u32 = 15;

/// Background.
pub const PAPER: RGBColor = RGBColor(252, 251, 247);
/// Axes, text and the requirement markers.
pub const INK: RGBColor = RGBColor(38, 41, 46);
/// Grid lines.
pub const GRID: RGBColor = RGBColor(222, 220, 212);

/// The totals: worst case, RSS, nominal.
pub const TOTALS: [RGBColor; 3] = [
    RGBColor(176, 58, 46),   // brick: worst case
    RGBColor(31, 97, 141),   // deep blue: RSS
    RGBColor(110, 110, 110), // graphite: nominal
];

/// Contributors and overlaid designs, in order.
pub const SERIES: [RGBColor; 10] = [
    RGBColor(22, 160, 133),
    RGBColor(211, 84, 0),
    RGBColor(125, 60, 152),
    RGBColor(40, 116, 166),
    RGBColor(183, 149, 11),
    RGBColor(192, 57, 43),
    RGBColor(17, 122, 101),
    RGBColor(108, 52, 131),
    RGBColor(93, 109, 126),
    RGBColor(160, 64, 0),
];

/// Interference markers.
pub const INTERFERENCE: RGBColor = RGBColor(128, 128, 128);

/// How many contributors a sweep plot draws (the largest).
pub const MAX_CONTRIBUTOR_CURVES: usize = 8;

/// CMRR values above this are drawn at it (an infinite CMRR included).
pub const CEILING_DB: f64 = 200.0;
