//! The residue of a switching source against time: the common-mode
//! waveform above, the differential residue referred to the input below,
//! with the allowed band, the blanking or sampling window, and the
//! settling time after each edge marked.

use super::style::{
    FONT, GRID, INK, INTERFERENCE, LABEL_SIZE, PAPER, SERIES, SIZE, TITLE_SIZE, TOTALS,
};
use super::svg::{failed, PlotError};
use plotters::prelude::*;

/// One residue curve.
#[derive(Debug, Clone)]
pub struct TimeCurve {
    /// What it is (`nominal`, `worst corner`, `worst-case bound`).
    pub label: String,
    /// Its samples over one period, volts.
    pub samples: Vec<f64>,
    /// Whether it is an envelope (a magnitude), drawn at ± its value.
    pub envelope: bool,
}

/// Everything a residue plot shows. Times are seconds from the start of
/// the rising edge; every sample vector covers one period evenly.
#[derive(Debug, Clone)]
pub struct ResiduePlot {
    /// The title.
    pub title: String,
    /// The period, seconds.
    pub period_s: f64,
    /// The common-mode waveform, volts.
    pub common_mode: Vec<f64>,
    /// The residue curves, the judged one first.
    pub curves: Vec<TimeCurve>,
    /// The allowed band, ± volts RTI.
    pub band_v: Option<f64>,
    /// Settling marks: (time, label).
    pub settling: Vec<(f64, String)>,
    /// Shaded times (blanking, or the sampling window), with a label.
    pub shaded: Vec<(f64, f64)>,
    /// What the shading means.
    pub shaded_label: Option<String>,
}

/// A time unit for an axis spanning `span` seconds: (factor, symbol).
fn time_unit(span: f64) -> (f64, &'static str) {
    if span < 2e-6 {
        (1e9, "ns")
    } else if span < 2e-3 {
        (1e6, "µs")
    } else if span < 2.0 {
        (1e3, "ms")
    } else {
        (1.0, "s")
    }
}

/// A voltage unit for values up to `largest` volts: (factor, symbol).
fn volt_unit(largest: f64) -> (f64, &'static str) {
    if largest < 1e-6 {
        (1e9, "nV")
    } else if largest < 1e-3 {
        (1e6, "µV")
    } else if largest < 1.0 {
        (1e3, "mV")
    } else {
        (1.0, "V")
    }
}

/// At most this many buckets across the plot: each keeps its smallest and
/// largest sample, so no peak is lost.
const BUCKETS: usize = 900;

/// `samples` reduced to at most two points per bucket (min and max, in
/// time order), scaled: (time, value) in plot units.
fn reduced(samples: &[f64], period: f64, t_scale: f64, v_scale: f64, sign: f64) -> Vec<(f64, f64)> {
    let n = samples.len();
    let step = period / n as f64;
    let per_bucket = n.div_ceil(BUCKETS).max(1);
    let mut points = Vec::with_capacity(2 * BUCKETS + 1);
    for (b, chunk) in samples.chunks(per_bucket).enumerate() {
        let first = b * per_bucket;
        let (mut lo, mut hi) = (0, 0);
        for (i, v) in chunk.iter().enumerate() {
            if *v < chunk[lo] {
                lo = i;
            }
            if *v > chunk[hi] {
                hi = i;
            }
        }
        let mut pair = [lo, hi];
        pair.sort_unstable();
        for i in pair {
            let t = (first + i) as f64 * step;
            points.push((t * t_scale, sign * chunk[i] * v_scale));
        }
    }
    if let Some(&v) = samples.first() {
        points.push((period * t_scale, sign * v * v_scale));
    }
    points
}

/// Draw the residue plot as SVG.
pub fn plot_residue(plot: &ResiduePlot) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&PAPER).map_err(failed)?;
        let root = root
            .titled(&plot.title, (FONT, TITLE_SIZE).into_font().color(&INK))
            .map_err(failed)?;
        let (upper, lower) = root.split_vertically((SIZE.1 as f64 * 0.30) as u32);
        let (t_scale, t_unit) = time_unit(plot.period_s);
        let t_end = plot.period_s * t_scale;
        let label_font = (FONT, LABEL_SIZE).into_font().color(&INK);

        // The common mode.
        let (cm_low, cm_high) = plot
            .common_mode
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), &v| {
                (l.min(v), h.max(v))
            });
        let cm_pad = ((cm_high - cm_low) * 0.15).max(1e-12);
        let (cm_scale, cm_unit) = volt_unit(cm_high.abs().max(cm_low.abs()));
        let mut cm_chart = ChartBuilder::on(&upper)
            .margin(10)
            .margin_right(30)
            .x_label_area_size(10)
            .y_label_area_size(80)
            .build_cartesian_2d(
                0.0..t_end,
                (cm_low - cm_pad) * cm_scale..(cm_high + cm_pad) * cm_scale,
            )
            .map_err(failed)?;
        cm_chart
            .configure_mesh()
            .light_line_style(GRID.mix(0.15))
            .bold_line_style(GRID)
            .axis_style(INK)
            .x_labels(0)
            .y_desc(format!("common mode ({cm_unit})"))
            .y_labels(4)
            .label_style(label_font.clone())
            .axis_desc_style(label_font.clone())
            .draw()
            .map_err(failed)?;
        cm_chart
            .draw_series(LineSeries::new(
                reduced(&plot.common_mode, plot.period_s, t_scale, cm_scale, 1.0),
                INK.stroke_width(2),
            ))
            .map_err(failed)?;

        // The residue.
        let largest = plot
            .curves
            .iter()
            .flat_map(|c| c.samples.iter().map(|v| v.abs()))
            .chain(plot.band_v)
            .fold(0.0, f64::max)
            .max(1e-15);
        let (v_scale, v_unit) = volt_unit(largest);
        let top = largest * 1.15 * v_scale;
        let mut chart = ChartBuilder::on(&lower)
            .margin(10)
            .margin_right(30)
            .x_label_area_size(46)
            .y_label_area_size(80)
            .build_cartesian_2d(0.0..t_end, -top..top)
            .map_err(failed)?;
        chart
            .configure_mesh()
            .light_line_style(GRID.mix(0.5))
            .bold_line_style(GRID)
            .axis_style(INK)
            .x_desc(format!("time from the start of the rising edge ({t_unit})"))
            .y_desc(format!("residue RTI ({v_unit})"))
            .label_style(label_font.clone())
            .axis_desc_style(label_font.clone())
            .draw()
            .map_err(failed)?;
        for &(from, to) in &plot.shaded {
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(from * t_scale, -top), (to * t_scale, top)],
                    SERIES[4].mix(0.12).filled(),
                )))
                .map_err(failed)?;
        }
        if let (Some(label), false) = (&plot.shaded_label, plot.shaded.is_empty()) {
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(0.0, 0.0), (0.0, 0.0)],
                    SERIES[4].mix(0.3).filled(),
                )))
                .map_err(failed)?
                .label(label.clone())
                .legend(|(x, y)| {
                    Rectangle::new([(x, y - 5), (x + 18, y + 5)], SERIES[4].mix(0.3).filled())
                });
        }
        if let Some(band) = plot.band_v {
            let b = band * v_scale;
            for level in [b, -b] {
                let series = chart
                    .draw_series(DashedLineSeries::new(
                        vec![(0.0, level), (t_end, level)],
                        6,
                        4,
                        TOTALS[0].stroke_width(1),
                    ))
                    .map_err(failed)?;
                if level > 0.0 {
                    series
                        .label(format!(
                            "allowed error ±{}",
                            crate::quantity::format_si(band, "V")
                        ))
                        .legend(|(x, y)| {
                            PathElement::new(vec![(x, y), (x + 18, y)], TOTALS[0].stroke_width(1))
                        });
                }
            }
        }
        let pens = [TOTALS[0], TOTALS[1], SERIES[0], TOTALS[2]];
        for (i, curve) in plot.curves.iter().enumerate() {
            let color = pens[i % pens.len()];
            let width = if i == 0 { 2 } else { 1 };
            let signs: &[f64] = if curve.envelope { &[1.0, -1.0] } else { &[1.0] };
            for (k, sign) in signs.iter().enumerate() {
                let points = reduced(&curve.samples, plot.period_s, t_scale, v_scale, *sign);
                let series = chart
                    .draw_series(LineSeries::new(points, color.stroke_width(width)))
                    .map_err(failed)?;
                if k == 0 {
                    let label = if curve.envelope {
                        format!("{} (± envelope)", curve.label)
                    } else {
                        curve.label.clone()
                    };
                    series.label(label).legend(move |(x, y)| {
                        PathElement::new(vec![(x, y), (x + 18, y)], color.stroke_width(2))
                    });
                }
            }
        }
        for (t, label) in &plot.settling {
            let x = t * t_scale;
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(x, -top), (x, top)],
                    3,
                    3,
                    INTERFERENCE.stroke_width(1),
                ))
                .map_err(failed)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    label.clone(),
                    (x, -top * 0.92),
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
    fn reduction_keeps_every_peak() {
        let samples: Vec<f64> = (0..100_000)
            .map(|i| {
                if i == 54_321 {
                    5.0
                } else {
                    (i as f64 * 0.01).sin()
                }
            })
            .collect();
        let points = reduced(&samples, 1.0, 1.0, 1.0, 1.0);
        assert!(points.len() <= 2 * BUCKETS + 1);
        assert!(points.iter().any(|p| p.1 == 5.0));
        assert_eq!(time_unit(50e-6), (1e6, "µs"));
        assert_eq!(volt_unit(2.5e-3), (1e3, "mV"));
    }
}
