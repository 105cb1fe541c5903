//! One table style for every report, and the width tables are fitted to.
//!
//! Tables are drawn with rounded borders and their numeric columns set
//! right. When the command writes to a terminal of known width (`COLUMNS`),
//! `main` sets that width here and every table wraps its widest cells, at
//! word boundaries, to fit; output to a file or a pipe is never wrapped, so
//! it stays the same whatever the terminal.

use std::ops::Range;
use std::sync::atomic::{AtomicUsize, Ordering};
use tabled::builder::Builder;
use tabled::settings::object::Columns;
use tabled::settings::peaker::Priority;
use tabled::settings::{Alignment, Style, Width};

/// The width tables are fitted to, 0 for no limit.
static TABLE_WIDTH: AtomicUsize = AtomicUsize::new(0);

/// Fit every table rendered from now on to `width` characters (`None`: no
/// limit). Narrower than 40 characters is taken as 40.
pub fn set_table_width(width: Option<usize>) {
    TABLE_WIDTH.store(width.map_or(0, |w| w.max(40)), Ordering::Relaxed);
}

/// A table in the tool's style: rounded borders, the columns in `numeric`
/// set right (`n..usize::MAX`: from column `n` on), wrapped to the table
/// width when one is set.
pub fn styled(builder: Builder, numeric: Range<usize>) -> String {
    let mut table = builder.build();
    // Never past the last column: a range open to the right is cut there.
    let columns = table.count_columns();
    let numeric = numeric.start.min(columns)..numeric.end.min(columns);
    table
        .with(Style::rounded())
        .modify(Columns::new(numeric), Alignment::right());
    let width = TABLE_WIDTH.load(Ordering::Relaxed);
    if width > 0 {
        table.with(
            Width::wrap(width)
                .keep_words(true)
                .priority(Priority::max(true)),
        );
    }
    table.to_string()
}
