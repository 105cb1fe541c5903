//! Validation of switching common-mode sources (periodic trapezoids).

use super::{Range, Validator};
use crate::budget::raw::{RawEdge, RawSwitching};
use crate::model::{Edge, ErrorLimit, Requirement, SampleWindow, Switching, Trapezoid};
use crate::quantity::{format_si, Dimension};
use crate::switching::MAX_HARMONICS;

/// Harmonics are summed, by default, up to this many times the inverse of
/// the shorter edge: well above the trapezoid's second corner `1/(π t_r)`,
/// past which its harmonics fall at 40 dB per decade.
pub const DEFAULT_HARMONICS_PER_EDGE: f64 = 10.0;

/// A single edge's first window: this many edge durations per period of
/// the slow square wave it is judged as (doubled until the residue is
/// flat before the next edge).
pub const SINGLE_EDGE_FIRST_PERIODS: f64 = 400.0;

/// The most switching sources one budget may name: each is thousands of
/// solves at up to three temperatures.
pub const MAX_SWITCHING: usize = 16;

impl Validator<'_> {
    pub(super) fn switching(
        &mut self,
        raw: &RawSwitching,
        path: &str,
        requirement: Option<&Requirement>,
    ) -> Option<Switching> {
        let index: usize = path
            .trim_start_matches("switching[")
            .trim_end_matches(']')
            .parse()
            .unwrap_or(0);
        if index == MAX_SWITCHING {
            self.problem(
                path,
                format!("the budget names more than {MAX_SWITCHING} switching sources"),
                "keep the switching sources that differ (each edge rate and level), at most 16",
            );
        }
        if index >= MAX_SWITCHING {
            return None;
        }
        if raw.name.trim().is_empty() {
            self.problem(
                &format!("{path}.name"),
                "the switching source has no name",
                "name it, e.g. `name: phase node at each PWM edge`",
            );
        }
        let level = |v: &mut Self, scalar, field: &str| {
            v.formless_voltage(
                scalar,
                &format!("{path}.{field}"),
                Range::Any,
                (
                    "a switching level is an instantaneous voltage, with no rms, peak or peak-to-peak form",
                    "write it as a plain voltage, e.g. `48 V` or `0 V`",
                ),
            )
        };
        let low = level(self, &raw.low, "low");
        let high = level(self, &raw.high, "high");
        let time = |v: &mut Self, scalar: &crate::budget::raw::Scalar, field: &str| {
            v.quantity(
                scalar,
                &format!("{path}.{field}"),
                Dimension::Time,
                Range::Positive,
                false,
            )
            .map(|q| q.value)
        };
        let single = raw.single_edge.unwrap_or(false);
        let slew = match &raw.slew_rate {
            Some(scalar) => Some(
                self.quantity(
                    scalar,
                    &format!("{path}.slew_rate"),
                    Dimension::SlewRate,
                    Range::Positive,
                    false,
                )?
                .value,
            ),
            None => None,
        };
        let (low, high) = (low?, high?);
        if low == high {
            self.problem(
                &format!("{path}.high"),
                "the high and low levels are the same, so nothing switches",
                "give the levels the common mode switches between, e.g. `low: 0 V`, `high: 48 V`",
            );
            return None;
        }
        // An edge's duration: as written, or the step over the slew rate.
        let edge = |v: &mut Self,
                    given: &Option<crate::budget::raw::Scalar>,
                    field: &str,
                    which: &str| {
            match (given, slew) {
                (Some(_), Some(_)) => {
                    v.problem(
                        &format!("{path}.{field}"),
                        format!("both `{field}` and `slew_rate` are given; the {which} edge has one duration"),
                        format!("keep `{field}` (the edge's 0 % to 100 % time) or `slew_rate` (its dV/dt), not both"),
                    );
                    None
                }
                (Some(scalar), None) => time(v, scalar, field),
                (None, Some(rate)) => Some((high - low).abs() / rate),
                (None, None) => {
                    v.problem(
                        path,
                        format!("the {which} edge has no duration"),
                        format!("add `{field}: 50 ns` (0 % to 100 %) or `slew_rate: 2 V/ns`"),
                    );
                    None
                }
            }
        };
        if single {
            for (given, field, what) in [
                (raw.frequency.is_some(), "frequency", "switching frequency"),
                (raw.duty.is_some(), "duty", "duty cycle"),
                (raw.fall_time.is_some(), "fall_time", "falling edge"),
            ] {
                if given {
                    self.problem(
                        &format!("{path}.{field}"),
                        format!("a single edge has no {what}"),
                        format!(
                            "remove `{field}`, or drop `single_edge: true` for a periodic waveform"
                        ),
                    );
                }
            }
            if raw.frequency.is_some() || raw.duty.is_some() || raw.fall_time.is_some() {
                return None;
            }
        }
        let needed = |v: &mut Self,
                      given: &Option<crate::budget::raw::Scalar>,
                      field: &str,
                      example: &str| {
            if given.is_none() {
                v.problem(
                    path,
                    format!("a periodic switching source needs its `{field}`"),
                    format!("add `{field}: {example}`, or `single_edge: true` for one edge"),
                );
            }
        };
        if !single {
            needed(self, &raw.frequency, "frequency", "20 kHz");
            needed(self, &raw.duty, "duty", "50 %");
        }
        let frequency = match &raw.frequency {
            Some(scalar) => self
                .quantity(
                    scalar,
                    &format!("{path}.frequency"),
                    Dimension::Frequency,
                    Range::Positive,
                    false,
                )
                .map(|q| q.value),
            None => None,
        };
        let duty = match &raw.duty {
            Some(scalar) => self
                .quantity(
                    scalar,
                    &format!("{path}.duty"),
                    Dimension::Fraction,
                    Range::Positive,
                    false,
                )
                .map(|q| q.value),
            None => None,
        };
        let rise = edge(self, &raw.rise_time, "rise_time", "rising");
        let fall = if single {
            rise
        } else {
            edge(self, &raw.fall_time, "fall_time", "falling")
        };
        let rise = rise?;
        let fall = fall?;
        // A single edge is judged as the rising edge of a slow square wave
        // whose period the judgement chooses; this one is its first try.
        let (frequency, duty) = if single {
            (1.0 / (SINGLE_EDGE_FIRST_PERIODS * rise), 0.5)
        } else {
            (frequency?, duty?)
        };
        if duty >= 1.0 {
            let text = raw.duty.as_ref().map_or("", |d| d.0.trim());
            self.problem(
                &format!("{path}.duty"),
                format!("a duty cycle of {text} leaves no time at the low level"),
                "give the share of the period between the edges' 50 % points, above 0 % and below 100 %",
            );
            return None;
        }
        let duty_text = raw.duty.as_ref().map_or("50 %", |d| d.0.trim());
        let waveform = Trapezoid {
            low_v: low,
            high_v: high,
            frequency_hz: frequency,
            duty,
            rise_s: rise,
            fall_s: fall,
        };
        let period = waveform.period_s();
        let edges = (rise + fall) / 2.0;
        if duty * period < edges || (1.0 - duty) * period < edges {
            self.problem(
                &format!("{path}.duty"),
                format!(
                    "at {} and {} duty, the {} level lasts {} between the edges' 50 % points, less than half the two edges together ({} and {}, so {})",
                    format_si(frequency, "Hz"),
                    duty_text,
                    if duty * period < edges { "high" } else { "low" },
                    format_si((duty * period).min((1.0 - duty) * period), "s"),
                    format_si(rise, "s"),
                    format_si(fall, "s"),
                    format_si(edges, "s")
                ),
                "shorten the edges, lower the frequency, or move the duty cycle away from its limits",
            );
            return None;
        }
        let default_to = DEFAULT_HARMONICS_PER_EDGE / rise.min(fall);
        let harmonics_to = match &raw.harmonics_to {
            Some(scalar) => {
                self.quantity(
                    scalar,
                    &format!("{path}.harmonics_to"),
                    Dimension::Frequency,
                    Range::Positive,
                    false,
                )?
                .value
            }
            None => default_to,
        };
        let harmonics = (harmonics_to / frequency).floor();
        // A single edge's window (and so its harmonics) is chosen when it is
        // judged, within the bound.
        if harmonics > MAX_HARMONICS as f64 && !single {
            let field = if raw.harmonics_to.is_some() {
                format!("{path}.harmonics_to")
            } else {
                format!("{path}.rise_time")
            };
            self.problem(
                &field,
                format!(
                    "summing the harmonics of {} up to {} takes {harmonics:.0} of them, more than the {MAX_HARMONICS} one run takes",
                    format_si(frequency, "Hz"),
                    format_si(harmonics_to, "Hz")
                ),
                format!(
                    "set `harmonics_to:` lower (at most {}); the report bounds what the harmonics above it could add",
                    format_si(MAX_HARMONICS as f64 * frequency, "Hz")
                ),
            );
            return None;
        }
        let max_error = raw
            .max_error
            .as_ref()
            .and_then(|e| {
                self.error_limit(
                    e,
                    &format!("{path}.max_error"),
                    requirement
                        .and_then(|r| r.full_scale_volts)
                        .or(self.measurand.as_ref().and_then(|m| m.full_scale_volts)),
                )
            })
            .or(requirement.and_then(|r| r.max_error));
        let limit_path = if raw.max_error.is_some() {
            format!("{path}.max_error")
        } else {
            "requirement.max_error".to_string()
        };
        // A fraction of a stated reading instead of full scale.
        let max_error = match &raw.reading {
            None => max_error,
            Some(scalar) => {
                let reading = self.formless_voltage(
                    scalar,
                    &format!("{path}.reading"),
                    Range::Positive,
                    (
                        "a reading is the differential input the sensor gives, a plain voltage",
                        "write it without rms/pk/pp, e.g. `reading: 20 mV`",
                    ),
                )?;
                match max_error {
                    Some(ErrorLimit::OfFullScale { fraction, .. }) => Some(ErrorLimit::OfReading {
                        fraction,
                        reading_volts: reading,
                    }),
                    _ => {
                        self.problem(
                            &format!("{path}.reading"),
                            "a reading is given, but the allowed error is not a fraction to take of it",
                            "give the allowed error as a share of the reading (e.g. `max_error: 1 %`), or drop `reading`",
                        );
                        return None;
                    }
                }
            }
        };
        if let Some(ErrorLimit::Codes { .. }) = max_error {
            self.problem(
                &limit_path,
                "a switching residue is judged at the converter's input, in time, so its limit cannot be counted in codes",
                "give this source its own `max_error` in volts referred to the input, as a fraction of full scale, or in the measurand's unit",
            );
            return None;
        }
        if let Some(ErrorLimit::OfFullScale {
            full_scale_volts, ..
        }) = max_error
        {
            if full_scale_volts.is_nan() {
                self.problem(
                    &limit_path,
                    "the allowed error is a fraction of full scale, but the requirement gives no full scale",
                    "add `full_scale: …` to the requirement, or give the error in volts",
                );
                return None;
            }
        }
        let blanking = match &raw.blanking {
            Some(scalar) => Some(time(self, scalar, "blanking")?),
            None => None,
        };
        if let (Some(blanking), false) = (blanking, single) {
            let shorter = waveform
                .interval_after(Edge::Rising)
                .1
                .min(period - waveform.edge_start_s(Edge::Falling));
            if blanking >= shorter {
                self.problem(
                    &format!("{path}.blanking"),
                    format!(
                        "a blanking of {} leaves nothing of the shorter level ({}) to judge",
                        format_si(blanking, "s"),
                        format_si(shorter, "s")
                    ),
                    "give a blanking time shorter than each level lasts",
                );
                return None;
            }
        }
        let sample = match &raw.sample {
            Some(s) => {
                let delay = time(self, &s.delay, "sample.delay");
                let width = time(self, &s.window, "sample.window");
                let after = match s.after {
                    RawEdge::Rising => Edge::Rising,
                    RawEdge::Falling => Edge::Falling,
                };
                let sample = SampleWindow {
                    after,
                    delay_s: delay?,
                    width_s: width?,
                };
                if single && after == Edge::Falling {
                    self.problem(
                        &format!("{path}.sample.after"),
                        "a single edge has no falling edge to sample after",
                        "write `after: rising` (the single edge is the one from `low` to `high`)",
                    );
                    return None;
                }
                let (start, end) = waveform.interval_after(after);
                let end = if single { f64::INFINITY } else { end };
                let from = start + sample.delay_s - sample.width_s / 2.0;
                let to = start + sample.delay_s + sample.width_s / 2.0;
                if from < start || to > end {
                    self.problem(
                        &format!("{path}.sample"),
                        format!(
                            "the window from {} to {} after the {} edge runs outside the time before the next edge ({})",
                            format_si(from - start, "s"),
                            format_si(to - start, "s"),
                            after.label(),
                            format_si(end - start, "s")
                        ),
                        "centre the window (`delay`) so that it starts after the edge and ends before the next one",
                    );
                    return None;
                }
                Some(sample)
            }
            None => None,
        };
        if let (Some(_), Some(_)) = (&sample, &blanking) {
            self.problem(
                &format!("{path}.blanking"),
                "both a blanking time and a sampling window are given; the residue is judged on one of them",
                "keep `sample:` to judge what the converter reads, or `blanking:` to judge every instant after it",
            );
            return None;
        }
        if let Some(ErrorLimit::Volts(limit)) = max_error {
            use crate::quantity::AmplitudeForm;
            let refused = match (limit.form, &sample, blanking) {
                (Some(AmplitudeForm::PeakToPeak), Some(_), _) => Some("a sampling window's mean is one value per sample; it has no peak-to-peak swing"),
                (Some(AmplitudeForm::Rms | AmplitudeForm::PeakToPeak), None, Some(_)) => Some("after blanking, the limit bounds the residue at every instant judged, a peak figure"),
                (Some(AmplitudeForm::Rms | AmplitudeForm::PeakToPeak), None, None) if single => Some("a single edge has no period to take an rms or peak-to-peak value over; the limit bounds the residue at every instant after the edge"),
                _ => None,
            };
            if let Some(why) = refused {
                self.problem(
                    &limit_path,
                    why.to_string(),
                    "give the limit as a plain or peak voltage (e.g. `500 uV`) or a fraction of full scale",
                );
                return None;
            }
        }
        Some(Switching {
            name: raw.name.trim().to_string(),
            waveform,
            harmonics_to_hz: harmonics_to,
            harmonics_to_stated: raw.harmonics_to.is_some(),
            max_error,
            blanking_s: blanking,
            sample,
            single_edge: single,
        })
    }
}
