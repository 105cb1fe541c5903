//! What is measured of a residue waveform: its rms, its peak, its
//! peak-to-peak swing, its peak outside the blanked time after each edge,
//! or its mean over a converter's sampling window; and how long it takes
//! to settle into a band after each edge.
//!
//! Every measure is a seminorm (`M(a + b) ≤ M(a) + M(b)`, `M(−a) = M(a)`),
//! so the residue of any corner is bounded, to first order, by the
//! measure of the nominal residue plus the measures of the parameters'
//! deviations: the linear bound, as for a sine.

use super::Residue;
use crate::engine::linalg::C64;
use crate::model::{Edge, SampleWindow, Trapezoid};
use std::f64::consts::PI;

/// A measure of a residue waveform.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Measure {
    /// The rms value over a period, exact from the harmonics (Parseval).
    Rms,
    /// The largest magnitude over the period.
    Peak,
    /// The largest value less the smallest.
    PeakToPeak,
    /// The largest magnitude outside the blanked time after each edge.
    AfterBlanking {
        /// The times judged: from the end of each blanking to the start
        /// of the next edge, seconds from the rising edge's start.
        judged: [(f64, f64); 2],
    },
    /// The magnitude of the mean over a window, exact from the harmonics.
    WindowMean {
        /// The window's start, seconds from the rising edge's start.
        start_s: f64,
        /// Its width, seconds.
        width_s: f64,
    },
}

impl Measure {
    /// The measure for a blanking time after each edge of `waveform`.
    pub fn after_blanking(waveform: &Trapezoid, blanking_s: f64) -> Measure {
        let judged = [Edge::Rising, Edge::Falling].map(|edge| {
            let (start, end) = waveform.interval_after(edge);
            (start + blanking_s, end)
        });
        Measure::AfterBlanking { judged }
    }

    /// The measure for a single edge, the rising edge of `waveform`: the
    /// peak from `blanking_s` after it to the half period (the falling
    /// edge of the slow square wave it is judged as is not judged).
    pub fn after_single_edge(waveform: &Trapezoid, blanking_s: f64) -> Measure {
        let (start, end) = waveform.interval_after(Edge::Rising);
        Measure::AfterBlanking {
            judged: [(start + blanking_s, end), (end, end)],
        }
    }

    /// The measure for a sampling window of `waveform`.
    pub fn window(waveform: &Trapezoid, sample: &SampleWindow) -> Measure {
        let centre = waveform.edge_start_s(sample.after) + sample.delay_s;
        Measure::WindowMean {
            start_s: centre - sample.width_s / 2.0,
            width_s: sample.width_s,
        }
    }

    /// A short name, for reports.
    pub fn name(&self) -> &'static str {
        match self {
            Measure::Rms => "rms",
            Measure::Peak => "peak",
            Measure::PeakToPeak => "peak-to-peak",
            Measure::AfterBlanking { judged } if judged[0].0 == 0.0 => "peak after the edge",
            Measure::AfterBlanking { .. } => "peak after blanking",
            Measure::WindowMean { .. } => "mean over the sampling window",
        }
    }

    /// The measure of `residue` (volts), whose period is `period_s`.
    pub fn of(&self, residue: &Residue, period_s: f64) -> f64 {
        match *self {
            Measure::Rms => {
                let power: f64 = residue.harmonics.iter().map(|c| 2.0 * c.norm_sqr()).sum();
                (residue.dc * residue.dc + power).sqrt()
            }
            Measure::WindowMean { start_s, width_s } => {
                window_mean(residue, period_s, start_s, width_s).abs()
            }
            _ => self
                .of_samples(&residue.samples, period_s)
                .expect("read off the samples"),
        }
    }

    /// The measure read off `samples` alone (one period, evenly spaced):
    /// the peak, the peak-to-peak swing, the peak after blanking; `None`
    /// for the rms and the window mean, which are exact from the
    /// harmonics.
    pub fn of_samples(&self, samples: &[f64], period_s: f64) -> Option<f64> {
        match *self {
            Measure::Peak => Some(samples.iter().fold(0.0, |m, v| m.max(v.abs()))),
            Measure::PeakToPeak => {
                let (low, high) = samples
                    .iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), &v| {
                        (l.min(v), h.max(v))
                    });
                Some(high - low)
            }
            Measure::AfterBlanking { judged } => Some(
                judged_samples(judged, samples.len(), period_s)
                    .map(|i| samples[i].abs())
                    .fold(0.0, f64::max),
            ),
            Measure::Rms | Measure::WindowMean { .. } => None,
        }
    }

    /// The signed value that decides a corner's signs, and where: for the
    /// peak measures the sample index where `envelope` is largest (the
    /// residue's sign there), for the window its mean; `None` for the rms
    /// (whose corner follows the nominal residue's shape).
    pub fn deciding_index(&self, envelope: &[f64], period_s: f64) -> Option<usize> {
        let candidates: Box<dyn Iterator<Item = usize>> = match *self {
            Measure::Peak | Measure::PeakToPeak => Box::new(0..envelope.len()),
            Measure::AfterBlanking { judged } => {
                Box::new(judged_samples(judged, envelope.len(), period_s))
            }
            Measure::Rms | Measure::WindowMean { .. } => return None,
        };
        candidates.max_by(|&a, &b| envelope[a].total_cmp(&envelope[b]))
    }
}

/// The sample indices inside the judged intervals.
fn judged_samples(
    judged: [(f64, f64); 2],
    points: usize,
    period_s: f64,
) -> impl Iterator<Item = usize> {
    let step = period_s / points as f64;
    judged.into_iter().flat_map(move |(start, end)| {
        let first = (start / step).ceil().max(0.0) as usize;
        let last = ((end / step).ceil() as usize).min(points);
        first..last
    })
}

/// The exact mean of `residue` over `[start, start + width]`: the DC term,
/// plus each harmonic's integral `2·Re(c_n (e^{jωb} − e^{jωa})/(jω))` over
/// the width.
pub fn window_mean(residue: &Residue, period_s: f64, start_s: f64, width_s: f64) -> f64 {
    let omega0 = 2.0 * PI / period_s;
    let end_s = start_s + width_s;
    let integral: f64 = residue
        .harmonics
        .iter()
        .enumerate()
        .map(|(k, c)| {
            let omega = omega0 * (k + 1) as f64;
            let swing = C64::from_polar(1.0, omega * end_s) - C64::from_polar(1.0, omega * start_s);
            2.0 * (c * swing / C64::new(0.0, omega)).re
        })
        .sum();
    residue.dc + integral / width_s
}

/// How long after the start of `edge` the waveform `samples` (one period,
/// evenly spaced, starting at the rising edge) stays within `±band` until
/// the next edge: the last crossing out of the band, interpolated between
/// samples. Zero when it never leaves the band; `None` when it is still
/// outside at the next edge.
pub fn settling_time(samples: &[f64], waveform: &Trapezoid, edge: Edge, band: f64) -> Option<f64> {
    let period = waveform.period_s();
    let step = period / samples.len() as f64;
    let (start, end) = waveform.interval_after(edge);
    let first = (start / step).ceil() as usize;
    let last = ((end / step).ceil() as usize).min(samples.len());
    let outside = (first..last).rev().find(|&i| samples[i].abs() > band);
    match outside {
        None => Some(0.0),
        Some(i) if i + 1 >= last => None,
        Some(i) => {
            // Linear interpolation to the band between samples i and i+1.
            let (a, b) = (samples[i].abs(), samples[i + 1].abs());
            let fraction = if a > b { (a - band) / (a - b) } else { 0.0 };
            Some(((i as f64 + fraction) * step - start).max(0.0))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::switching::synthesis::sample_periodic;
    use approx::assert_relative_eq;

    fn residue(dc: f64, harmonics: Vec<C64>, points: usize) -> Residue {
        Residue {
            samples: sample_periodic(dc, &harmonics, points),
            dc,
            harmonics,
        }
    }

    #[test]
    fn a_sine_measures_as_a_sine() {
        // 2·Re(c e^{jωt}) with |c| = 0.5: a sine of 1 V peak, so 0.707 V
        // rms and 2 V peak-to-peak; its mean over a whole period is zero,
        // over the first quarter period 2/π (common practice, no source).
        let r = residue(0.0, vec![C64::new(0.0, -0.5)], 1024);
        assert_relative_eq!(Measure::Rms.of(&r, 1.0), 0.5f64.sqrt(), epsilon = 1e-12);
        assert_relative_eq!(Measure::Peak.of(&r, 1.0), 1.0, epsilon = 1e-4);
        assert_relative_eq!(Measure::PeakToPeak.of(&r, 1.0), 2.0, epsilon = 1e-4);
        let quarter = Measure::WindowMean {
            start_s: 0.0,
            width_s: 0.25,
        };
        assert_relative_eq!(quarter.of(&r, 1.0), 2.0 / PI, epsilon = 1e-12);
    }
}
