//! Validation of a converter's digital filter and of where its reference
//! comes from.

use super::{Range, Validator};
use crate::budget::raw::{RawFilter, RawReference, Scalar};
use crate::model::{DigitalFilter, RatiometricReference, ResponseTable, SincFilter, SincForm};
use crate::quantity::Dimension;

/// The highest sinc order accepted (delta-sigma decimation filters are of
/// order 1 to 5, common practice, no source).
const MAX_SINC_ORDER: u32 = 5;
/// The most points a response table may hold.
const MAX_TABLE_POINTS: usize = 1000;
/// The largest decimation ratio accepted.
const MAX_DECIMATION: u32 = 1 << 24;

impl Validator<'_> {
    /// A converter's digital filter at `path` (the `filter` field).
    pub(super) fn digital_filter(&mut self, raw: &RawFilter, path: &str) -> Option<DigitalFilter> {
        let named = [
            raw.sinc.is_some(),
            raw.average_over.is_some(),
            raw.average_of.is_some(),
            raw.table.is_some(),
        ]
        .iter()
        .filter(|&&given| given)
        .count();
        if named != 1 {
            self.problem(
                path,
                "a digital filter needs exactly one of `sinc`, `average_over`, `average_of` or `table`",
                "give e.g. `filter: {sinc: 3, output_rate: 10 Hz}`, `filter: {average_over: 20 ms}`, `filter: {average_of: 16, sample_rate: 800 Hz}` or `filter: {table: [[50 Hz, -100 dB], [60 Hz, -90 dB]]}`",
            );
            return None;
        }
        let not_for = |fields: &[(bool, &'static str)]| -> Vec<&'static str> {
            fields
                .iter()
                .filter(|(given, _)| *given)
                .map(|(_, f)| *f)
                .collect()
        };
        let output_rate = (raw.output_rate.is_some(), "output_rate");
        let decimation = (raw.decimation.is_some(), "decimation");
        let sample_rate = (raw.sample_rate.is_some(), "sample_rate");
        let strays = if raw.sinc.is_some() {
            not_for(&[sample_rate])
        } else if raw.average_of.is_some() {
            not_for(&[output_rate, decimation])
        } else {
            not_for(&[output_rate, decimation, sample_rate])
        };
        if let Some(field) = strays.first() {
            self.problem(
                &format!("{path}.{field}"),
                format!("`{field}` does not belong with this kind of filter"),
                "`output_rate` and `decimation` go with `sinc`; `sample_rate` with `average_of`; `average_over` and `table` stand alone",
            );
            return None;
        }
        if let Some(order) = raw.sinc {
            return self.sinc(raw, order, path);
        }
        if let Some(time) = &raw.average_over {
            let t = self.quantity(
                time,
                &format!("{path}.average_over"),
                Dimension::Time,
                Range::Positive,
                false,
            )?;
            return Some(DigitalFilter::Sinc(SincFilter {
                order: 1,
                notch_hz: 1.0 / t.value,
                decimation: None,
                written_as: SincForm::Average,
            }));
        }
        if let Some(samples) = raw.average_of {
            let samples = self.decimation(samples, &format!("{path}.average_of"))?;
            let Some(rate) = &raw.sample_rate else {
                self.problem(
                    path,
                    "an average of samples needs the rate they are taken at",
                    "add `sample_rate: …`, e.g. `sample_rate: 800 Hz`",
                );
                return None;
            };
            let rate = self.quantity(
                rate,
                &format!("{path}.sample_rate"),
                Dimension::Frequency,
                Range::Positive,
                false,
            )?;
            return Some(DigitalFilter::Sinc(SincFilter {
                order: 1,
                notch_hz: rate.value / f64::from(samples),
                decimation: Some(samples),
                written_as: SincForm::Average,
            }));
        }
        let table = raw.table.as_ref()?;
        self.table(table, &format!("{path}.table"))
    }

    fn sinc(&mut self, raw: &RawFilter, order: u32, path: &str) -> Option<DigitalFilter> {
        if !(1..=MAX_SINC_ORDER).contains(&order) {
            self.problem(
                &format!("{path}.sinc"),
                format!("a sinc filter of order {order} is not one this tool models"),
                format!("give the order from 1 to {MAX_SINC_ORDER}, e.g. `sinc: 3`"),
            );
            return None;
        }
        let Some(rate) = &raw.output_rate else {
            self.problem(
                path,
                "a sinc filter needs its output data rate, where its first notch sits",
                "add `output_rate: …`, e.g. `output_rate: 10 Hz`",
            );
            return None;
        };
        let rate = self.quantity(
            rate,
            &format!("{path}.output_rate"),
            Dimension::Frequency,
            Range::Positive,
            false,
        )?;
        let decimation = match raw.decimation {
            Some(m) => Some(self.decimation(m, &format!("{path}.decimation"))?),
            None => None,
        };
        Some(DigitalFilter::Sinc(SincFilter {
            order,
            notch_hz: rate.value,
            decimation,
            written_as: SincForm::Decimation,
        }))
    }

    fn decimation(&mut self, samples: u32, path: &str) -> Option<u32> {
        if (1..=MAX_DECIMATION).contains(&samples) {
            return Some(samples);
        }
        self.problem(
            path,
            format!("{samples} is not a number of samples per output"),
            format!("give a whole number from 1 to {MAX_DECIMATION}"),
        );
        None
    }

    fn table(&mut self, raw: &[Vec<Scalar>], path: &str) -> Option<DigitalFilter> {
        if raw.len() < 2 || raw.len() > MAX_TABLE_POINTS {
            self.problem(
                path,
                format!("a response table of {} points", raw.len()),
                format!("give from 2 to {MAX_TABLE_POINTS} points `[frequency, gain]`, e.g. `[[50 Hz, -100 dB], [60 Hz, -90 dB]]`"),
            );
            return None;
        }
        let mut points = Vec::with_capacity(raw.len());
        for (i, point) in raw.iter().enumerate() {
            let at = format!("{path}[{i}]");
            let [frequency, gain] = point.as_slice() else {
                self.problem(
                    &at,
                    format!("a table point has {} values", point.len()),
                    "write each point as `[frequency, gain]`, e.g. `[50 Hz, -100 dB]`",
                );
                return None;
            };
            let f = self.quantity(
                frequency,
                &format!("{at}[0]"),
                Dimension::Frequency,
                Range::Positive,
                false,
            );
            let g = self.gain_db(gain, &format!("{at}[1]"));
            points.push((f?.value, g?));
        }
        if let Some(i) = points.windows(2).position(|w| w[1].0 <= w[0].0) {
            self.problem(
                &format!("{path}[{}]", i + 1),
                "the table's frequencies do not rise",
                "list the points from the lowest frequency up, each above the last",
            );
            return None;
        }
        Some(DigitalFilter::Table(ResponseTable { points }))
    }

    /// A filter gain in dB relative to DC: at most 0 dB, written with `dB`.
    fn gain_db(&mut self, raw: &Scalar, path: &str) -> Option<f64> {
        let text = raw.0.trim();
        let number = text
            .strip_suffix("dB")
            .map(str::trim)
            .and_then(|n| n.parse::<f64>().ok());
        match number {
            Some(db) if db.is_finite() && (-400.0..=0.0).contains(&db) => Some(db),
            Some(db) if db.is_finite() && db > 0.0 => {
                self.problem(
                    path,
                    format!("`{text}` is a gain above DC's; a digital filter's table is relative to its DC gain"),
                    "give the gain at or below 0 dB, e.g. `-100 dB`",
                );
                None
            }
            _ => {
                self.problem(
                    path,
                    format!("`{text}` is not a gain in dB relative to DC"),
                    "write it in decibels, at or below 0 dB and above −400 dB, e.g. `-100 dB`",
                );
                None
            }
        }
    }
}

impl Validator<'_> {
    /// A converter's reference taken from the bridge's excitation
    /// (`from: excitation`), optionally through a single pole.
    pub(super) fn converter_reference(
        &mut self,
        raw: &RawReference,
        path: &str,
    ) -> Option<(RatiometricReference, String)> {
        let at = format!("{path}.reference.from");
        if raw.from.trim() != "excitation" {
            self.problem(
                &at,
                format!("`{}` is not a reference this tool models", raw.from.trim()),
                "write `from: excitation` for a reference taken from the bridge's excitation (a ratiometric reading), or leave `reference` out for a reference of the converter's own",
            );
            return None;
        }
        let corner_hz = match &raw.corner {
            Some(c) => Some(
                self.quantity(
                    c,
                    &format!("{path}.reference.corner"),
                    Dimension::Frequency,
                    Range::Positive,
                    false,
                )?
                .value,
            ),
            None => None,
        };
        Some((RatiometricReference { corner_hz }, at))
    }

    /// A reference taken from the excitation needs a bridge that has one.
    pub(super) fn check_reference_source(&mut self) {
        let Some((_, at)) = &self.converter_reference else {
            return;
        };
        if self
            .measurand
            .as_ref()
            .is_some_and(|m| m.excitation.is_some())
            || self.measurand_refused
        {
            return;
        }
        let at = at.clone();
        self.problem(
            &at,
            "the reference is taken from the bridge's excitation, and the measurand names no bridge",
            "add `measurand: {unit: …, bridge: {sensitivity: …, excitation: 5 V, capacity: …}}`, or leave `reference` out",
        );
        self.converter_reference = None;
    }
}
