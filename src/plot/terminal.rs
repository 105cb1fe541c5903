//! A compact text chart of a CMRR curve for the terminal: log frequency
//! across, dB up, one mark per column.

/// Rows of the plotting area.
const ROWS: usize = 14;
/// Columns of the plotting area.
const COLUMNS: usize = 64;

/// Draw `points` (frequency Hz, CMRR dB, ascending frequency) as text,
/// marking `required` minima with `v` where they fall on the chart.
pub fn text_chart(title: &str, points: &[(f64, f64)], required: &[(f64, f64)]) -> String {
    let finite: Vec<(f64, f64)> = points
        .iter()
        .map(|&(f, db)| (f, if db.is_finite() { db } else { 200.0 }))
        .filter(|&(f, _)| f > 0.0)
        .collect();
    if finite.len() < 2 {
        return format!("{title}: not enough points to chart\n");
    }
    let (f_low, f_high) = (finite[0].0.log10(), finite[finite.len() - 1].0.log10());
    let lowest = finite.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
    let highest = finite.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max);
    let bottom = (lowest / 10.0).floor() * 10.0;
    let top = ((highest / 10.0).ceil() * 10.0).max(bottom + 10.0);
    let column_of =
        |f: f64| (((f.log10() - f_low) / (f_high - f_low)) * (COLUMNS - 1) as f64).round() as usize;
    let row_of = |db: f64| {
        let clamped = db.clamp(bottom, top);
        ((top - clamped) / (top - bottom) * (ROWS - 1) as f64).round() as usize
    };
    let mut grid = vec![vec![' '; COLUMNS]; ROWS];
    // The curve: for each column, the lowest CMRR of the points in it.
    let mut per_column: Vec<Option<f64>> = vec![None; COLUMNS];
    for &(f, db) in &finite {
        let c = column_of(f).min(COLUMNS - 1);
        per_column[c] = Some(per_column[c].map_or(db, |d: f64| d.min(db)));
    }
    for (c, db) in per_column.iter().enumerate() {
        if let Some(db) = db {
            grid[row_of(*db)][c] = '●';
        }
    }
    for &(f, db) in required {
        if f > 0.0 && f.log10() >= f_low && f.log10() <= f_high {
            grid[row_of(db)][column_of(f).min(COLUMNS - 1)] = 'v';
        }
    }
    let mut out = format!("{title}\n");
    for (r, row) in grid.iter().enumerate() {
        let label = if r == 0 || r == ROWS - 1 || r == ROWS / 2 {
            let db = top - (top - bottom) * r as f64 / (ROWS - 1) as f64;
            format!("{db:>5.0} dB ┤")
        } else {
            "         │".to_string()
        };
        out.push_str(&label);
        out.push_str(&row.iter().collect::<String>());
        out.push('\n');
    }
    out.push_str("         └");
    out.push_str(&"─".repeat(COLUMNS));
    out.push('\n');
    let left = crate::quantity::format_si(10f64.powf(f_low), "Hz");
    let right = crate::quantity::format_si(10f64.powf(f_high), "Hz");
    let gap = (COLUMNS + 1).saturating_sub(left.chars().count() + right.chars().count());
    out.push_str(&format!("          {left}{}{right}\n", " ".repeat(gap)));
    out.push_str("          ● worst-case CMRR   v required minimum\n");
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn draws_a_falling_curve() {
        let points: Vec<(f64, f64)> = (0..50)
            .map(|i| {
                let f = 10f64.powf(i as f64 / 10.0);
                (f, 120.0 - 20.0 * (f / 100.0).log10().max(0.0))
            })
            .collect();
        let chart = text_chart("test", &points, &[(50.0, 100.0)]);
        assert!(chart.contains('●'));
        assert!(chart.contains('v'));
        assert!(chart.contains("120 dB"));
        assert!(chart.contains("1.00 Hz"));
    }
}
