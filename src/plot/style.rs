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

/// Contributors and overlaid designs, in order: eight hues far apart from
/// each other and from the totals' brick and blue.
pub const SERIES: [RGBColor; 8] = [
    RGBColor(22, 160, 133), // teal
    RGBColor(211, 84, 0),   // pumpkin
    RGBColor(125, 60, 152), // plum
    RGBColor(183, 149, 11), // mustard
    RGBColor(93, 109, 126), // slate
    RGBColor(39, 174, 96),  // leaf
    RGBColor(199, 21, 133), // magenta
    RGBColor(120, 66, 18),  // umber
];

/// Dash patterns (drawn, gap; pixels), cycled with the colours so that no
/// two of the first sixteen curves look alike; `None` is solid.
pub const DASHES: [Option<(u32, u32)>; 4] = [None, Some((9, 4)), Some((2, 3)), Some((12, 3))];

/// Width of the legend panel beside a plot, in pixels.
pub const LEGEND_WIDTH: u32 = 270;

/// How far above the highest total a plot's axis reaches for contributors
/// (a contributor far above every total does not matter to the budget).
pub const CONTRIBUTOR_HEADROOM_DB: f64 = 40.0;

/// Interference markers.
pub const INTERFERENCE: RGBColor = RGBColor(128, 128, 128);

/// How many contributors a sweep plot draws (the largest).
pub const MAX_CONTRIBUTOR_CURVES: usize = 8;

/// CMRR values above this are drawn at it (an infinite CMRR included).
pub const CEILING_DB: f64 = 200.0;
