//! SVG plots of CMRR against frequency, drawn with plotters' SVG backend.

use super::style::{
    CEILING_DB, FONT, GRID, INK, INTERFERENCE, LABEL_SIZE, PAPER, SERIES, SIZE, TITLE_SIZE, TOTALS,
};
use plotters::prelude::*;
use thiserror::Error;

/// Why a plot could not be drawn.
#[derive(Debug, Error)]
#[error("the plot could not be drawn: {0}")]
pub struct PlotError(String);

fn failed<E: std::fmt::Display>(error: E) -> PlotError {
    PlotError(error.to_string())
}

/// How a curve is drawn.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Pen {
    /// Heavy and solid.
    Heavy(RGBColor),
    /// Medium and dashed.
    Dashed(RGBColor),
    /// Thin and solid.
    Thin(RGBColor),
}

/// One curve: a label and (frequency Hz, CMRR dB) points.
#[derive(Debug, Clone)]
struct Curve {
    label: String,
    points: Vec<(f64, f64)>,
    pen: Pen,
}

/// Everything a CMRR-against-frequency figure shows.
#[derive(Debug, Clone)]
struct Figure {
    title: String,
    curves: Vec<Curve>,
    /// Required minima: (frequency, dB).
    requirements: Vec<(f64, f64)>,
    /// Interference frequencies with a short label.
    interference: Vec<(f64, String)>,
}

/// One design's curve for an overlay plot.
#[derive(Debug, Clone)]
pub struct OverlaySeries {
    /// The design's name.
    pub label: String,
    /// (frequency Hz, worst-case CMRR dB) points.
    pub points: Vec<(f64, f64)>,
}

/// A sweep plot: the three totals heavy, the largest contributors thin.
///
/// `totals` are (label, points) for worst case, RSS and nominal;
/// `contributors` the curves to draw beside them, largest first.
pub fn plot_sweep(
    title: &str,
    totals: [(&str, Vec<(f64, f64)>); 3],
    contributors: Vec<(String, Vec<(f64, f64)>)>,
    requirements: &[(f64, f64)],
    interference: &[(f64, String)],
) -> Result<String, PlotError> {
    let [worst, rss, nominal] = totals;
    let mut curves = vec![
        Curve {
            label: worst.0.into(),
            points: worst.1,
            pen: Pen::Heavy(TOTALS[0]),
        },
        Curve {
            label: rss.0.into(),
            points: rss.1,
            pen: Pen::Dashed(TOTALS[1]),
        },
        Curve {
            label: nominal.0.into(),
            points: nominal.1,
            pen: Pen::Dashed(TOTALS[2]),
        },
    ];
    curves.extend(
        contributors
            .into_iter()
            .enumerate()
            .map(|(i, (label, points))| Curve {
                label,
                points,
                pen: Pen::Thin(SERIES[i % SERIES.len()]),
            }),
    );
    render(&Figure {
        title: title.into(),
        curves,
        requirements: requirements.to_vec(),
        interference: interference.to_vec(),
    })
}

/// An overlay of several designs' worst-case CMRR.
pub fn plot_overlay(
    title: &str,
    designs: &[OverlaySeries],
    requirements: &[(f64, f64)],
    interference: &[(f64, String)],
) -> Result<String, PlotError> {
    let curves = designs
        .iter()
        .enumerate()
        .map(|(i, d)| Curve {
            label: d.label.clone(),
            points: d.points.clone(),
            pen: Pen::Heavy(SERIES[i % SERIES.len()]),
        })
        .collect();
    render(&Figure {
        title: title.into(),
        curves,
        requirements: requirements.to_vec(),
        interference: interference.to_vec(),
    })
}

/// Clip a CMRR for drawing: above the ceiling is drawn at it.
fn clip(db: f64) -> f64 {
    db.min(CEILING_DB)
}

/// The runs of finite points of a curve (an infinite CMRR breaks it).
fn finite_segments(points: &[(f64, f64)]) -> Vec<Vec<(f64, f64)>> {
    let mut segments: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut current = Vec::new();
    for &(f, db) in points {
        if db.is_finite() {
            current.push((f, clip(db)));
        } else if !current.is_empty() {
            segments.push(std::mem::take(&mut current));
        }
    }
    if !current.is_empty() {
        segments.push(current);
    }
    segments
}

/// The vertical range: from the lowest value down to a multiple of 20 dB
/// below it, to the highest (capped) rounded up.
fn db_range(figure: &Figure) -> (f64, f64) {
    let values = figure
        .curves
        .iter()
        .flat_map(|c| {
            c.points
                .iter()
                .filter(|p| p.1.is_finite())
                .map(|p| clip(p.1))
        })
        .chain(figure.requirements.iter().map(|r| r.1));
    let (low, high) = values.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
        (lo.min(v), hi.max(v))
    });
    if !low.is_finite() {
        return (0.0, 140.0);
    }
    let bottom = ((low - 5.0) / 20.0).floor() * 20.0;
    let top = ((high + 5.0) / 20.0).ceil() * 20.0;
    (bottom, top.max(bottom + 40.0).min(CEILING_DB + 20.0))
}

fn frequency_range(figure: &Figure) -> (f64, f64) {
    let freqs = figure
        .curves
        .iter()
        .flat_map(|c| c.points.iter().map(|p| p.0));
    let (low, high) = freqs.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), f| {
        (lo.min(f), hi.max(f))
    });
    if low.is_finite() && high > low {
        (low, high)
    } else {
        (1.0, 1e6)
    }
}

/// A frequency axis label: 100 mHz, 1 Hz, 10 kHz.
fn frequency_label(f: &f64) -> String {
    crate::quantity::format_si(*f, "Hz")
        .replace(".00", "")
        .replace(".0 ", " ")
}

fn render(figure: &Figure) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&PAPER).map_err(failed)?;
        let (f_low, f_high) = frequency_range(figure);
        let (db_low, db_high) = db_range(figure);
        let mut chart = ChartBuilder::on(&root)
            .caption(&figure.title, (FONT, TITLE_SIZE).into_font().color(&INK))
            .margin(16)
            .x_label_area_size(46)
            .y_label_area_size(64)
            .build_cartesian_2d((f_low..f_high).log_scale(), db_low..db_high)
            .map_err(failed)?;
        chart
            .configure_mesh()
            .light_line_style(GRID.mix(0.5))
            .bold_line_style(GRID)
            .axis_style(INK)
            .x_desc("frequency (Hz)")
            .y_desc("CMRR (dB)")
            .x_label_formatter(&frequency_label)
            .y_label_formatter(&|db| format!("{db:.0} dB"))
            .label_style((FONT, LABEL_SIZE).into_font().color(&INK))
            .axis_desc_style((FONT, LABEL_SIZE).into_font().color(&INK))
            .draw()
            .map_err(failed)?;
        for (freq, label) in &figure.interference {
            if *freq < f_low || *freq > f_high {
                continue;
            }
            let dotted = DashedLineSeries::new(
                vec![(*freq, db_low), (*freq, db_high)],
                3,
                4,
                INTERFERENCE.stroke_width(1),
            );
            chart.draw_series(dotted).map_err(failed)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    label.clone(),
                    (*freq, db_high - (db_high - db_low) * 0.04),
                    (FONT, LABEL_SIZE - 3).into_font().color(&INTERFERENCE),
                )))
                .map_err(failed)?;
        }
        // Totals first, so they lead the legend; an infinite CMRR (a matched
        // chain) is not drawn, and a curve that is infinite throughout is
        // named in the legend only.
        for curve in &figure.curves {
            let (color, width) = match curve.pen {
                Pen::Heavy(c) => (c, 3),
                Pen::Dashed(c) => (c, 2),
                Pen::Thin(c) => (c, 1),
            };
            let style = color.stroke_width(width);
            let segments = finite_segments(&curve.points);
            if segments.is_empty() {
                chart
                    .draw_series(std::iter::empty::<PathElement<(f64, f64)>>())
                    .map_err(failed)?
                    .label(format!("{}: ∞ dB throughout", curve.label))
                    .legend(move |(x, y)| {
                        PathElement::new(vec![(x, y), (x + 22, y)], color.stroke_width(width))
                    });
                continue;
            }
            for (index, segment) in segments.into_iter().enumerate() {
                let drawn = match curve.pen {
                    Pen::Dashed(_) => chart
                        .draw_series(DashedLineSeries::new(segment, 8, 5, style))
                        .map_err(failed)?,
                    _ => chart
                        .draw_series(LineSeries::new(segment, style))
                        .map_err(failed)?,
                };
                if index == 0 {
                    drawn.label(curve.label.clone()).legend(move |(x, y)| {
                        PathElement::new(vec![(x, y), (x + 22, y)], color.stroke_width(width))
                    });
                }
            }
        }
        if !figure.requirements.is_empty() {
            chart
                .draw_series(
                    figure
                        .requirements
                        .iter()
                        .map(|&(f, db)| TriangleMarker::new((f, db), 7, INK.filled())),
                )
                .map_err(failed)?
                .label("required minimum")
                .legend(|(x, y)| TriangleMarker::new((x + 11, y), 6, INK.filled()));
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(PAPER.mix(0.9))
            .border_style(GRID)
            .label_font((FONT, LABEL_SIZE - 2).into_font().color(&INK))
            .draw()
            .map_err(failed)?;
        root.present().map_err(failed)?;
    }
    Ok(svg)
}

/// A histogram of CMRR over the trials at one frequency: bars of the count
/// per dB range, the required minimum as a dotted vertical, the percentiles
/// as short ticks.
pub fn plot_histogram(
    title: &str,
    bars: &[(f64, u64)],
    required_db: Option<f64>,
    percentiles: &[(&str, f64)],
) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&PAPER).map_err(failed)?;
        let width = if bars.len() > 1 {
            bars[1].0 - bars[0].0
        } else {
            1.0
        };
        let low = bars
            .first()
            .map_or(0.0, |b| b.0)
            .min(required_db.unwrap_or(f64::INFINITY) - width);
        let high = bars
            .last()
            .map_or(1.0, |b| b.0 + width)
            .max(required_db.unwrap_or(f64::NEG_INFINITY) + width);
        let tallest = bars.iter().map(|b| b.1).max().unwrap_or(1).max(1) as f64;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, TITLE_SIZE).into_font().color(&INK))
            .margin(16)
            .x_label_area_size(46)
            .y_label_area_size(72)
            .build_cartesian_2d(low..high, 0.0..tallest * 1.2)
            .map_err(failed)?;
        chart
            .configure_mesh()
            .light_line_style(GRID.mix(0.5))
            .bold_line_style(GRID)
            .axis_style(INK)
            .x_desc("CMRR (dB)")
            .y_desc("units (count)")
            .x_label_formatter(&|db| format!("{db:.1} dB"))
            .y_label_formatter(&|n| format!("{n:.0}"))
            .label_style((FONT, LABEL_SIZE).into_font().color(&INK))
            .axis_desc_style((FONT, LABEL_SIZE).into_font().color(&INK))
            .draw()
            .map_err(failed)?;
        chart
            .draw_series(bars.iter().map(|&(edge, count)| {
                Rectangle::new(
                    [(edge, 0.0), (edge + width * 0.92, count as f64)],
                    SERIES[3].mix(0.85).filled(),
                )
            }))
            .map_err(failed)?
            .label("units per bin")
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 14, y + 5)], SERIES[3].filled()));
        if let Some(required) = required_db {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(required, 0.0), (required, tallest * 1.2)],
                    4,
                    4,
                    TOTALS[0].stroke_width(2),
                ))
                .map_err(failed)?
                .label(format!("required minimum {required:.1} dB"))
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 22, y)], TOTALS[0].stroke_width(2))
                });
        }
        // A label closer to the one before than a label's width goes up a
        // row, so neighbouring percentiles stay legible.
        let label_room = (high - low) * 0.06;
        let mut previous: Option<(f64, usize)> = None;
        for (name, db) in percentiles.iter().filter(|(_, db)| db.is_finite()) {
            let row = match previous {
                Some((x, row)) if db - x < label_room => (row + 1) % 2,
                _ => 0,
            };
            previous = Some((*db, row));
            let lift = row as f64 * 0.07;
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(*db, tallest * 1.02), (*db, tallest * (1.08 + lift))],
                    INK.stroke_width(2),
                )))
                .map_err(failed)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    name.to_string(),
                    (*db, tallest * (1.10 + lift)),
                    (FONT, LABEL_SIZE - 3).into_font().color(&INK),
                )))
                .map_err(failed)?;
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(PAPER.mix(0.9))
            .border_style(GRID)
            .label_font((FONT, LABEL_SIZE - 2).into_font().color(&INK))
            .draw()
            .map_err(failed)?;
        root.present().map_err(failed)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges() {
        let figure = Figure {
            title: "t".into(),
            curves: vec![Curve {
                label: "a".into(),
                points: vec![(1.0, 63.0), (1e3, f64::INFINITY)],
                pen: Pen::Heavy(INK),
            }],
            requirements: vec![(50.0, 80.0)],
            interference: vec![],
        };
        assert_eq!(db_range(&figure), (40.0, 100.0));
        assert_eq!(
            finite_segments(&[(1.0, 1.0), (2.0, f64::INFINITY), (3.0, 3.0)]).len(),
            2
        );
        assert_eq!(frequency_range(&figure), (1.0, 1e3));
        assert_eq!(frequency_label(&1e3), "1 kHz");
        assert_eq!(frequency_label(&0.1), "100 mHz");
    }
}
