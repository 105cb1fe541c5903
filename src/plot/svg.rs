//! SVG plots of CMRR against frequency, drawn with plotters' SVG backend.

use super::style::{
    CEILING_DB, CONTRIBUTOR_HEADROOM_DB, DASHES, FONT, GRID, INK, INTERFERENCE, LABEL_SIZE,
    LEGEND_WIDTH, PAPER, SERIES, SIZE, TITLE_SIZE, TOTALS,
};
use plotters::prelude::*;
use thiserror::Error;

/// Why a plot could not be drawn.
#[derive(Debug, Error)]
#[error("the plot could not be drawn: {0}")]
pub struct PlotError(String);

pub(super) fn failed<E: std::fmt::Display>(error: E) -> PlotError {
    PlotError(error.to_string())
}

/// How a curve is drawn.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Pen {
    /// Heavy and solid.
    Heavy(RGBColor),
    /// Medium and dashed.
    Dashed(RGBColor),
    /// Thin, solid or with a dash pattern (drawn, gap).
    Thin(RGBColor, Option<(u32, u32)>),
}

impl Pen {
    /// The colour, line width and dash pattern.
    fn stroke(self) -> (RGBColor, u32, Option<(u32, u32)>) {
        match self {
            Pen::Heavy(c) => (c, 3, None),
            Pen::Dashed(c) => (c, 2, Some((8, 5))),
            Pen::Thin(c, dash) => (c, 1, dash),
        }
    }

    /// Whether the curve is a total (or a design), which sets the axis.
    fn is_total(self) -> bool {
        !matches!(self, Pen::Thin(..))
    }
}

/// The `i`-th series pen: colours cycled with dash patterns.
fn series_pen(i: usize) -> Pen {
    Pen::Thin(
        SERIES[i % SERIES.len()],
        DASHES[(i / SERIES.len() + i) % DASHES.len()],
    )
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
                pen: series_pen(i),
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
            pen: if i < SERIES.len() {
                Pen::Heavy(SERIES[i])
            } else {
                series_pen(i)
            },
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

/// The vertical range, fitted to the data: from the lowest value down to a
/// multiple of 20 dB, up to the highest total or requirement plus room for
/// the contributors near it ([`CONTRIBUTOR_HEADROOM_DB`]) — or the highest
/// contributor, if lower — rounded up to 20 dB.
fn db_range(figure: &Figure) -> (f64, f64) {
    let finite = |c: &Curve| -> Vec<f64> {
        c.points
            .iter()
            .filter(|p| p.1.is_finite())
            .map(|p| clip(p.1))
            .collect()
    };
    let fold = |values: &mut dyn Iterator<Item = f64>| {
        values.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
            (lo.min(v), hi.max(v))
        })
    };
    let requirements = figure.requirements.iter().map(|r| r.1);
    let (total_low, total_high) = fold(
        &mut figure
            .curves
            .iter()
            .filter(|c| c.pen.is_total())
            .flat_map(finite)
            .chain(requirements.clone()),
    );
    let (all_low, all_high) = fold(&mut figure.curves.iter().flat_map(finite).chain(requirements));
    if !all_low.is_finite() {
        return (0.0, 140.0);
    }
    let high = if total_high.is_finite() {
        all_high.min(total_high + CONTRIBUTOR_HEADROOM_DB)
    } else {
        all_high
    };
    let low = if total_low.is_finite() {
        all_low.min(total_low)
    } else {
        all_low
    };
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

/// A legend line: a sample of the pen and the label.
struct LegendEntry {
    label: String,
    sample: LegendSample,
}

/// What a legend line shows beside its label.
enum LegendSample {
    Line(Pen),
    Triangle,
}

/// Draw `entries` down the legend panel `area`.
fn draw_legend(
    area: &DrawingArea<SVGBackend, plotters::coord::Shift>,
    entries: &[LegendEntry],
) -> Result<(), PlotError> {
    let font = (FONT, LABEL_SIZE - 2).into_font().color(&INK);
    let top = 70;
    let step = 22;
    let mut row_offset = 0;
    for (row, entry) in entries.iter().enumerate() {
        let y = top + row as i32 * step + row_offset;
        if y > SIZE.1 as i32 - 20 {
            break;
        }
        match entry.sample {
            LegendSample::Line(pen) => {
                let (color, width, dash) = pen.stroke();
                let style = color.stroke_width(width);
                let pieces: Vec<(i32, i32)> = match dash {
                    None => vec![(0, 26)],
                    Some((on, off)) => (0..26)
                        .step_by((on + off) as usize)
                        .map(|x| (x, (x + on as i32).min(26)))
                        .collect(),
                };
                for (from, to) in pieces {
                    area.draw(&PathElement::new(vec![(8 + from, y), (8 + to, y)], style))
                        .map_err(failed)?;
                }
            }
            LegendSample::Triangle => {
                area.draw(&TriangleMarker::new((21, y), 6, INK.filled()))
                    .map_err(failed)?;
            }
        }
        let lines = wrapped(&entry.label, LEGEND_CHARS);
        for (k, line) in lines.iter().enumerate() {
            area.draw(&Text::new(
                line.clone(),
                (42 + if k > 0 { 10 } else { 0 }, y - 7 + k as i32 * 16),
                font.clone(),
            ))
            .map_err(failed)?;
        }
        row_offset += lines.len().saturating_sub(1) as i32 * 16;
    }
    Ok(())
}

/// Characters of a legend label per line before it wraps.
const LEGEND_CHARS: usize = 34;

/// `label` broken into lines of at most about `width` characters, at a
/// space where there is one.
fn wrapped(label: &str, width: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut line = String::new();
    for word in label.split(' ') {
        if !line.is_empty() && line.chars().count() + 1 + word.chars().count() > width {
            lines.push(std::mem::take(&mut line));
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    if !line.is_empty() {
        lines.push(line);
    }
    lines
}

fn render(figure: &Figure) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&PAPER).map_err(failed)?;
        let (plot_area, legend_area) = root.split_horizontally(SIZE.0 - LEGEND_WIDTH);
        let (f_low, f_high) = frequency_range(figure);
        let (db_low, db_high) = db_range(figure);
        let mut chart = ChartBuilder::on(&plot_area)
            .caption(&figure.title, (FONT, TITLE_SIZE).into_font().color(&INK))
            .margin(16)
            .margin_right(36)
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
        // chain) is not drawn, a curve above the axis is drawn at its top,
        // and a curve that is infinite throughout is named in the legend
        // only.
        let mut legend = Vec::new();
        for curve in &figure.curves {
            let (color, width, dash) = curve.pen.stroke();
            let style = color.stroke_width(width);
            let segments = finite_segments(&curve.points);
            if segments.is_empty() {
                legend.push(LegendEntry {
                    label: format!("{}: ∞ dB throughout", curve.label),
                    sample: LegendSample::Line(curve.pen),
                });
                continue;
            }
            for segment in segments {
                let segment: Vec<(f64, f64)> = segment
                    .into_iter()
                    .map(|(f, db)| (f, db.min(db_high)))
                    .collect();
                match dash {
                    Some((on, off)) => chart
                        .draw_series(DashedLineSeries::new(segment, on, off, style))
                        .map_err(failed)?,
                    None => chart
                        .draw_series(LineSeries::new(segment, style))
                        .map_err(failed)?,
                };
            }
            legend.push(LegendEntry {
                label: curve.label.clone(),
                sample: LegendSample::Line(curve.pen),
            });
        }
        if !figure.requirements.is_empty() {
            chart
                .draw_series(
                    figure
                        .requirements
                        .iter()
                        .map(|&(f, db)| TriangleMarker::new((f, db), 7, INK.filled())),
                )
                .map_err(failed)?;
            legend.push(LegendEntry {
                label: "required minimum".into(),
                sample: LegendSample::Triangle,
            });
        }
        draw_legend(&legend_area, &legend)?;
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
            .margin_right(40)
            .x_label_area_size(46)
            .y_label_area_size(72)
            .build_cartesian_2d(low..high, 0.0..tallest * 1.4)
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
                    vec![(required, 0.0), (required, tallest * 1.4)],
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
        let label_room = (high - low) * 0.08;
        let mut placed: Vec<(f64, usize)> = Vec::new();
        for (name, db) in percentiles.iter().filter(|(_, db)| db.is_finite()) {
            // The lowest row with no label within a label's width.
            let row = (0..4)
                .find(|row| {
                    !placed
                        .iter()
                        .any(|(x, r)| r == row && (db - x).abs() < label_room)
                })
                .unwrap_or(3);
            placed.push((*db, row));
            let lift = row as f64 * 0.065;
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
        assert_eq!(
            wrapped("A2 gain-bandwidth, A1 gain-bandwidth (front end)", 34),
            vec!["A2 gain-bandwidth, A1", "gain-bandwidth (front end)"]
        );
    }

    /// Issue 17: the axis follows the totals, not a contributor far above
    /// them, and no two of the first sixteen series pens are alike.
    #[test]
    fn issue_17_axis_fitted_and_pens_distinct() {
        let figure = Figure {
            title: "t".into(),
            curves: vec![
                Curve {
                    label: "worst case".into(),
                    points: vec![(1.0, 60.0), (1e3, 70.0)],
                    pen: Pen::Heavy(INK),
                },
                Curve {
                    label: "far above".into(),
                    points: vec![(1.0, 230.0), (1e3, 230.0)],
                    pen: series_pen(0),
                },
            ],
            requirements: vec![],
            interference: vec![],
        };
        assert_eq!(db_range(&figure), (40.0, 120.0));
        let pens: Vec<Pen> = (0..16).map(series_pen).collect();
        for (i, a) in pens.iter().enumerate() {
            for b in &pens[i + 1..] {
                assert_ne!(a, b);
            }
        }
    }
}
