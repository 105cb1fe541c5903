//! A converter's digital filter: the decimation filter of a delta-sigma
//! converter (sinc of order 1 to 5), a plain average, or a response given
//! as a table. It acts on the converted samples, so it attenuates the
//! common-mode error and the wanted signal alike; its gain at DC is 1 (a
//! reading is calibrated at DC), so the error a source leaves in the
//! reading is the error at the converter's input times `|H(f)|` at the
//! source's frequency.
//!
//! A sinc filter of order `N` whose output data rate is `f_o`, decimating
//! by `M` from a modulator running at `M f_o`, has
//!
//! ```text
//! H(f) = [ sin(π f / f_o) / (M sin(π f / (M f_o))) ]^N
//! ```
//!
//! with notches at every multiple of `f_o` that is not a multiple of the
//! modulator rate (where the filter passes again: aliasing). Without `M`
//! the filter is taken in its continuous limit, `[sin(π f/f_o)/(π f/f_o)]^N`.
//! A plain average of `M` samples is the first-order case; an average over a
//! time `T` is its continuous limit with `f_o = 1/T`.

use crate::quantity::{format_db, format_si};

/// Points sampled across a frequency band before the largest is refined.
const BAND_SAMPLES: usize = 512;
/// Golden-section steps that refine the largest sample of a band.
const REFINE_STEPS: usize = 60;

/// The digital filter after a converter.
#[derive(Debug, Clone, PartialEq)]
pub enum DigitalFilter {
    /// A sinc (cascaded averaging) filter, or a plain average (order 1).
    Sinc(SincFilter),
    /// A measured or data-sheet response, interpolated in log frequency and
    /// dB between its points.
    Table(ResponseTable),
}

/// A sinc filter of order 1 to 5.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SincFilter {
    /// The number of cascaded averages (1 for a plain average).
    pub order: u32,
    /// The output data rate, Hz: the first notch.
    pub notch_hz: f64,
    /// The decimation ratio (samples averaged per output); `None` for the
    /// continuous limit.
    pub decimation: Option<u32>,
    /// How the budget wrote it: a sinc filter or an average.
    pub written_as: SincForm,
}

/// How a sinc filter was written in the budget, for its description.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SincForm {
    /// A delta-sigma decimation filter (`sinc: …`).
    Decimation,
    /// A plain average of samples or over a time (`average: …`).
    Average,
}

/// A response table: frequencies (Hz, ascending, above zero) and gains
/// (dB, relative to DC).
#[derive(Debug, Clone, PartialEq)]
pub struct ResponseTable {
    /// `(frequency_hz, gain_db)`, strictly ascending in frequency.
    pub points: Vec<(f64, f64)>,
}

/// Why a filter's gain could not be given at a frequency.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum FilterError {
    /// A table was asked for a frequency outside its points.
    #[error("the filter's table covers {from_hz} Hz to {to_hz} Hz, not {asked_hz} Hz; it is not extrapolated")]
    OutsideTable {
        /// The frequency asked for.
        asked_hz: f64,
        /// The table's lowest frequency.
        from_hz: f64,
        /// The table's highest frequency.
        to_hz: f64,
    },
}

impl SincFilter {
    /// `|H(f)|`.
    pub fn gain(&self, freq_hz: f64) -> f64 {
        let x = std::f64::consts::PI * freq_hz / self.notch_hz;
        let one_average = match self.decimation {
            Some(m) => {
                let m = f64::from(m);
                let below = m * (x / m).sin();
                if below.abs() < 1e-300 {
                    1.0 // a multiple of the modulator rate: the filter passes
                } else {
                    x.sin() / below
                }
            }
            None if x == 0.0 => 1.0,
            None => x.sin() / x,
        };
        one_average.abs().powi(self.order as i32)
    }
}

impl ResponseTable {
    /// `|H(f)|`, interpolated linearly in log frequency and dB; DC is 1.
    pub fn gain(&self, freq_hz: f64) -> Result<f64, FilterError> {
        if freq_hz == 0.0 {
            return Ok(1.0);
        }
        let (first, last) = (self.points[0], self.points[self.points.len() - 1]);
        let outside = FilterError::OutsideTable {
            asked_hz: freq_hz,
            from_hz: first.0,
            to_hz: last.0,
        };
        let tolerance = 1e-9;
        if freq_hz < first.0 * (1.0 - tolerance) || freq_hz > last.0 * (1.0 + tolerance) {
            return Err(outside);
        }
        let f = freq_hz.clamp(first.0, last.0);
        let upper = self
            .points
            .iter()
            .position(|&(p, _)| p >= f)
            .unwrap_or(self.points.len() - 1)
            .max(1);
        let (f0, g0) = self.points[upper - 1];
        let (f1, g1) = self.points[upper];
        let t = (f / f0).ln() / (f1 / f0).ln();
        let db = g0 + t * (g1 - g0);
        Ok(10f64.powf(db / 20.0))
    }

    /// The frequencies of the table's points strictly inside `(lo, hi)`.
    fn knots_inside(&self, lo: f64, hi: f64) -> impl Iterator<Item = f64> + '_ {
        self.points
            .iter()
            .map(|&(f, _)| f)
            .filter(move |&f| f > lo && f < hi)
    }
}

impl DigitalFilter {
    /// `|H(f)|`, relative to DC.
    pub fn gain(&self, freq_hz: f64) -> Result<f64, FilterError> {
        match self {
            DigitalFilter::Sinc(sinc) => Ok(sinc.gain(freq_hz)),
            DigitalFilter::Table(table) => table.gain(freq_hz),
        }
    }

    /// The largest `|H|` over `[lo, hi]` and where it is: the filter's
    /// worst rejection over a band (a mains frequency that drifts). A
    /// table's largest gain sits at an end or at one of its points; a sinc
    /// filter's band is sampled and its largest sample refined by a
    /// golden-section search (the response is smooth between notches).
    pub fn worst_gain(&self, lo: f64, hi: f64) -> Result<(f64, f64), FilterError> {
        let mut best = (self.gain(lo)?, lo);
        let mut consider = |f: f64, this: &Self| -> Result<(), FilterError> {
            let g = this.gain(f)?;
            if g > best.0 {
                best = (g, f);
            }
            Ok(())
        };
        consider(hi, self)?;
        if hi <= lo {
            return Ok(best);
        }
        match self {
            DigitalFilter::Table(table) => {
                for f in table.knots_inside(lo, hi) {
                    let g = table.gain(f)?;
                    if g > best.0 {
                        best = (g, f);
                    }
                }
                Ok(best)
            }
            DigitalFilter::Sinc(sinc) => Ok(sinc_band_maximum(sinc, lo, hi, best)),
        }
    }

    /// A short description, e.g. "sinc3, notches at multiples of 10.0 Hz".
    pub fn describe(&self) -> String {
        match self {
            DigitalFilter::Sinc(s) => {
                let notches = format!("notches at multiples of {}", format_si(s.notch_hz, "Hz"));
                let length = s
                    .decimation
                    .map(|m| format!(", {m} samples per output"))
                    .unwrap_or_default();
                match s.written_as {
                    SincForm::Decimation => format!("sinc{}{length}, {notches}", s.order),
                    SincForm::Average => format!("average{length}, {notches}"),
                }
            }
            DigitalFilter::Table(t) => format!(
                "table of {} points, {} to {}, {} to {}",
                t.points.len(),
                format_si(t.points[0].0, "Hz"),
                format_si(t.points[t.points.len() - 1].0, "Hz"),
                format_db(t.points[0].1),
                format_db(t.points[t.points.len() - 1].1)
            ),
        }
    }
}

/// The largest sinc gain over `[lo, hi]`, starting from the ends' `best`.
fn sinc_band_maximum(sinc: &SincFilter, lo: f64, hi: f64, mut best: (f64, f64)) -> (f64, f64) {
    let step = (hi - lo) / BAND_SAMPLES as f64;
    let mut best_index = None;
    for i in 1..BAND_SAMPLES {
        let f = lo + step * i as f64;
        let g = sinc.gain(f);
        if g > best.0 {
            best = (g, f);
            best_index = Some(i);
        }
    }
    let Some(i) = best_index else {
        return best;
    };
    // The largest sample's neighbours bracket a lobe's peak.
    let (mut a, mut b) = (lo + step * (i - 1) as f64, lo + step * (i + 1) as f64);
    let ratio = (5f64.sqrt() - 1.0) / 2.0;
    for _ in 0..REFINE_STEPS {
        let c = b - ratio * (b - a);
        let d = a + ratio * (b - a);
        if sinc.gain(c) > sinc.gain(d) {
            b = d;
        } else {
            a = c;
        }
    }
    let f = (a + b) / 2.0;
    let g = sinc.gain(f);
    if g > best.0 {
        best = (g, f);
    }
    best
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use std::f64::consts::PI;

    fn sinc(order: u32, notch_hz: f64, decimation: Option<u32>) -> SincFilter {
        SincFilter {
            order,
            notch_hz,
            decimation,
            written_as: SincForm::Decimation,
        }
    }

    #[test]
    fn sinc_response_matches_its_closed_form() {
        // |H(f)| = |sin(πf/f_o) / (M sin(πf/(M f_o)))|^N: Schreier and
        // Temes, Understanding Delta-Sigma Data Converters, 2005, the
        // decimation-filter chapter (sinc^N response), from memory.
        let filter = sinc(3, 10.0, Some(64));
        for f in [0.3, 2.0, 7.7, 13.0, 49.0, 333.0] {
            let x = PI * f / 10.0;
            let expected = (x.sin() / (64.0 * (x / 64.0).sin())).abs().powi(3);
            assert_relative_eq!(filter.gain(f), expected, max_relative = 1e-12);
        }
        assert_eq!(filter.gain(0.0), 1.0);
    }

    #[test]
    fn notches_sit_at_multiples_of_the_output_rate() {
        // Same source: zeros at k f_o, k = 1 … M−1; the response returns to
        // 1 at the modulator rate M f_o (aliasing).
        let filter = sinc(2, 10.0, Some(32));
        for k in 1..32 {
            assert!(filter.gain(10.0 * k as f64) < 1e-12, "k = {k}");
        }
        assert_relative_eq!(filter.gain(320.0), 1.0, max_relative = 1e-9);
    }

    #[test]
    fn continuous_limit_at_half_the_output_rate() {
        // sinc(1/2) = 2/π, so a sinc^N filter passes (2/π)^N at half its
        // output rate (same source, from memory): −3.92 dB per order.
        for order in 1..=5 {
            let filter = sinc(order, 10.0, None);
            assert_relative_eq!(
                filter.gain(5.0),
                (2.0 / PI).powi(order as i32),
                max_relative = 1e-12
            );
        }
    }

    #[test]
    fn worst_gain_over_a_drifting_mains_band() {
        // 50 Hz ±1 % against notches every 10 Hz: the band's low end is the
        // worst, |sin(π 4.95)/(π 4.95)|^N (the continuous sinc, same source;
        // the high end's 5.05 passes less).
        let filter = DigitalFilter::Sinc(sinc(3, 10.0, None));
        let (g, at) = filter.worst_gain(49.5, 50.5).unwrap();
        let x = PI * 4.95;
        assert_relative_eq!(g, (x.sin() / x).abs().powi(3), max_relative = 1e-12);
        assert_eq!(at, 49.5);
        // A band holding a lobe's peak: the refined maximum is the lobe's
        // peak, where tan(x) = x (x = 4.4934 for the second lobe).
        let filter = DigitalFilter::Sinc(sinc(1, 1.0, None));
        let (g, at) = filter.worst_gain(1.2, 1.8).unwrap();
        let x: f64 = 4.493_409_457_909_064;
        assert_relative_eq!(at, x / PI, max_relative = 1e-6);
        assert_relative_eq!(g, (x.sin() / x).abs(), max_relative = 1e-12);
    }

    #[test]
    fn a_table_interpolates_in_log_frequency_and_db_and_refuses_to_extrapolate() {
        let table = DigitalFilter::Table(ResponseTable {
            points: vec![(10.0, -20.0), (100.0, -60.0), (1000.0, -40.0)],
        });
        // Halfway in log frequency between 10 and 100 Hz: −40 dB.
        assert_relative_eq!(
            table.gain(10f64.powf(1.5)).unwrap(),
            0.01,
            max_relative = 1e-12
        );
        assert_eq!(table.gain(0.0).unwrap(), 1.0);
        assert!(matches!(
            table.gain(5.0),
            Err(FilterError::OutsideTable { .. })
        ));
        // The worst over a band holding a point with a higher gain than
        // the ends is that point.
        let peaked = DigitalFilter::Table(ResponseTable {
            points: vec![(10.0, -60.0), (100.0, -20.0), (1000.0, -60.0)],
        });
        let (g, at) = peaked.worst_gain(50.0, 200.0).unwrap();
        assert_relative_eq!(g, 0.1, max_relative = 1e-12);
        assert_eq!(at, 100.0);
    }
}
