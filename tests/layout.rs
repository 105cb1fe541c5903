//! Tables fitted to a terminal's width (issue 17): with a width set, every
//! table line fits in it; without, the layout is the golden corpus's.
//! (A file of its own: the width is process-wide.)

use cmrr_budget::budget::load_budget;
use cmrr_budget::report::layout::set_table_width;
use cmrr_budget::report::Render;
use cmrr_budget::verdict::judge;
use std::path::PathBuf;

#[test]
fn issue_17_tables_fit_the_terminal_width() {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("budgets/load-cell-scale.yaml");
    let report = judge(&load_budget(&path).unwrap()).unwrap();
    let table_lines = |text: &str| -> usize {
        text.lines()
            .filter(|l| l.starts_with(['│', '╭', '├', '╰']))
            .map(|l| l.chars().count())
            .max()
            .unwrap_or(0)
    };
    set_table_width(None);
    let wide = table_lines(&report.table());
    assert!(wide > 100, "{wide}");
    set_table_width(Some(80));
    let narrow = report.table();
    assert!(table_lines(&narrow) <= 80, "{}", table_lines(&narrow));
    // Nothing is lost: every contributor still shows.
    assert!(narrow.contains("op-amp CMRR"));
    set_table_width(None);
    assert_eq!(table_lines(&report.table()), wide);
}
